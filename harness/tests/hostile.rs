//! Hostile and careless input: scenario files, result files and arguments
//! of our own, each with the exit code and a fragment of the message it
//! must give, and the assertion that nothing was written outside the
//! report directory (`out/`).
//!
//! Every case runs in a fresh tree:
//!
//! ```text
//! ROOT/                 nothing may change here…
//!   outside.txt
//!   work/               …nor here (the working directory: inputs)
//!     s.toml            the base scenario (tests/data/hostile/base.toml)
//!     out/              the only place a case may write
//! ```

mod common;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use common::{data, text};
use sha2::{Digest, Sha256};

/// The base scenario: a small tank loop that passes everywhere.
fn base() -> String {
    std::fs::read_to_string(data("hostile/base.toml")).unwrap()
}

/// `base()` with `from` replaced by `to` (which must be there).
fn edit(from: &str, to: &str) -> String {
    let b = base();
    assert!(b.contains(from), "{from}");
    b.replacen(from, to, 1)
}

/// Every file under `root` with its content's digest (directories as
/// such), so a change anywhere shows.
fn snapshot(root: &Path) -> BTreeMap<PathBuf, String> {
    let mut out = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for e in std::fs::read_dir(&dir).unwrap() {
            let p = e.unwrap().path();
            let meta = std::fs::symlink_metadata(&p).unwrap();
            let what = if meta.is_dir() {
                stack.push(p.clone());
                "dir".to_owned()
            } else if meta.is_file() {
                Sha256::digest(std::fs::read(&p).unwrap())
                    .iter()
                    .map(|b| format!("{b:02x}"))
                    .collect::<String>()
            } else {
                "other".to_owned()
            };
            out.insert(p, what);
        }
    }
    out
}

/// One case: files to lay in `work/` (name, bytes), the arguments, the
/// exit code and a fragment that must appear on standard error (or, with
/// exit 0, on standard output).
struct Case {
    name: &'static str,
    files: Vec<(String, Vec<u8>)>,
    args: Vec<String>,
    code: i32,
    fragment: String,
}

fn case(name: &'static str, args: &[&str], code: i32, fragment: &str) -> Case {
    Case {
        name,
        files: Vec::new(),
        args: args.iter().map(|s| (*s).to_owned()).collect(),
        code,
        fragment: fragment.to_owned(),
    }
}

impl Case {
    fn file(mut self, name: &str, body: impl Into<Vec<u8>>) -> Self {
        self.files.push((name.to_owned(), body.into()));
        self
    }
}

/// Runs `c` in a fresh tree and checks code, message and writes.
fn run(c: &Case, setup: Option<&dyn Fn(&Path)>) {
    let root = tempfile::tempdir().unwrap();
    std::fs::write(root.path().join("outside.txt"), "outside").unwrap();
    let work = root.path().join("work");
    std::fs::create_dir_all(work.join("out")).unwrap();
    std::fs::write(work.join("s.toml"), base()).unwrap();
    for (name, body) in &c.files {
        std::fs::write(work.join(name), body).unwrap();
    }
    if let Some(f) = setup {
        f(&work);
    }
    let out_dir = work.join("out");
    let before = snapshot(root.path());
    let args: Vec<&str> = c.args.iter().map(String::as_str).collect();
    let out = common::evenkeel(&work, &args);
    let (stdout, stderr) = (text(&out.stdout), text(&out.stderr));
    assert_eq!(
        out.status.code(),
        Some(c.code),
        "{}: {args:?}\nstdout:\n{stdout}\nstderr:\n{stderr}",
        c.name
    );
    let shown = if c.code == 0 { &stdout } else { &stderr };
    assert!(
        shown.contains(&c.fragment) || stderr.contains(&c.fragment),
        "{}: {args:?}: want `{}` in:\n{shown}\n{stderr}",
        c.name,
        c.fragment
    );
    assert!(
        !stderr.contains('\u{1b}') && !stdout.contains('\u{1b}'),
        "{}: a raw control character reached the terminal",
        c.name
    );
    let after = snapshot(root.path());
    for (path, what) in &after {
        if !path.starts_with(&out_dir) {
            assert_eq!(
                before.get(path),
                Some(what),
                "{}: {} was written outside out/",
                c.name,
                path.display()
            );
        }
    }
    for path in before.keys() {
        assert!(
            path.starts_with(&out_dir) || after.contains_key(path),
            "{}: {} was removed",
            c.name,
            path.display()
        );
    }
    // No temporary file is left, in out/ or anywhere.
    for path in after.keys() {
        let name = path.file_name().unwrap().to_string_lossy();
        assert!(
            !name.starts_with(".evenkeel-"),
            "{}: temporary {name} left",
            c.name
        );
    }
    if c.code != 0 {
        assert_eq!(
            before, after,
            "{}: a refused run must write nothing at all",
            c.name
        );
    }
}

/// Cases about where outputs go.
fn output_cases() -> Vec<Case> {
    vec![
        case(
            "json over the input",
            &["check", "s.toml", "--json", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "junit over the input",
            &["check", "s.toml", "--junit", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "trace over the input",
            &["check", "s.toml", "--backend", "f64", "--trace", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "input spelt another way",
            &["check", "s.toml", "--json", "./out/../s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "json and junit on one file",
            &[
                "check",
                "s.toml",
                "--json",
                "out/x.xml",
                "--junit",
                "out/x.xml",
            ],
            2,
            "would both write",
        ),
        case(
            "json and save on one file",
            &[
                "sweep",
                "s.toml",
                "-q",
                "--json",
                "out/r.json",
                "--save",
                "out/r.json",
            ],
            2,
            "would both write",
        ),
        case(
            "two outputs on standard output",
            &["check", "s.toml", "--json", "-", "--junit", "-"],
            2,
            "only one output can go to standard output",
        ),
        case(
            "per-run trace on standard output",
            &["check", "s.toml", "--trace", "-"],
            2,
            "standard output cannot be used here",
        ),
        case(
            "the same scenario twice",
            &[
                "check",
                "s.toml",
                "s.toml",
                "--backend",
                "f64",
                "--plot",
                "out/p.svg",
            ],
            2,
            "would both write",
        ),
        case(
            "report into a missing directory",
            &["check", "s.toml", "--json", "out/none/r.json"],
            2,
            "does not exist",
        ),
        case(
            "report under a file",
            &["check", "s.toml", "--json", "s.toml/r.json"],
            2,
            "is a file, not a directory",
        ),
        case(
            "report onto a directory",
            &["check", "s.toml", "--json", "out"],
            2,
            "is a directory",
        ),
        case(
            "device as report",
            &["check", "s.toml", "--json", "/dev/null"],
            2,
            "only regular files are replaced",
        ),
        case(
            "plot of another kind",
            &["check", "s.toml", "--plot", "out/p.gif"],
            2,
            "must end in .svg or .png",
        ),
        case(
            "worst-dir is a file",
            &["sweep", "s.toml", "-q", "--worst-dir", "s.toml"],
            2,
            "is a file, not a directory",
        ),
        case(
            "worst-dir two levels missing",
            &["sweep", "s.toml", "-q", "--worst-dir", "out/a/b"],
            2,
            "neither it nor the directory",
        ),
        case(
            "worst-dir on standard output",
            &["sweep", "s.toml", "-q", "--worst-dir", "-"],
            2,
            "a directory is needed",
        ),
        case(
            "save over the input",
            &["sweep", "s.toml", "-q", "--save", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "rust snippet over the input",
            &["design", "s.toml", "--rust-out", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "designed scenario over the input",
            &["design", "s.toml", "--scenario-out", "s.toml"],
            2,
            "refusing to overwrite it",
        ),
        case(
            "compare trace over the input",
            &["compare", "s.toml", "--trace", "s.toml"],
            2,
            "is an input of this run",
        ),
        case(
            "control character in a path",
            &["check", "s.toml", "--json", "no\u{1b}[2Jdir/r.json"],
            2,
            "\\u{1b}",
        ),
        case(
            "junit on standard output",
            &["check", "s.toml", "--junit", "-"],
            0,
            "<testsuites",
        ),
        case(
            "one trace on standard output",
            &["check", "s.toml", "--backend", "f64", "--trace", "-"],
            0,
            "t_s,reference",
        ),
        case(
            "one plot on standard output",
            &["check", "s.toml", "--backend", "f64", "--plot", "-"],
            0,
            "<svg",
        ),
        case(
            "every report in out/",
            &[
                "check",
                "s.toml",
                "--json",
                "out/r.json",
                "--junit",
                "out/r.xml",
                "--trace",
                "out/t.csv",
                "--plot",
                "out/p.svg",
            ],
            0,
            "PASS",
        ),
        case(
            "sweep with every report in out/",
            &[
                "sweep",
                "s.toml",
                "-q",
                "--json",
                "out/r.json",
                "--junit",
                "out/r.xml",
                "--plot",
                "out/p.svg",
                "--save",
                "out/all.json",
                "--worst-dir",
                "out/worst",
            ],
            0,
            "PASS",
        ),
        Case {
            name: "file name too long",
            files: Vec::new(),
            args: vec![
                "check".into(),
                "s.toml".into(),
                "--json".into(),
                format!("out/{}.json", "x".repeat(300)),
            ],
            code: 2,
            fragment: "bytes long".into(),
        },
        case(
            "names that clean to one stem",
            &[
                "check",
                "a.toml",
                "b.toml",
                "--backend",
                "f64",
                "--trace",
                "out/t.csv",
            ],
            2,
            "would both write",
        )
        .file("a.toml", edit("name = \"tank\"", "name = \"été\""))
        .file("b.toml", edit("name = \"tank\"", "name = \"_t_\"")),
        case(
            "a name that climbs out",
            &["sweep", "esc.toml", "-q", "--worst-dir", "out/w"],
            0,
            "PASS",
        )
        .file(
            "esc.toml",
            edit("name = \"tank\"", "name = \"../../escape\""),
        ),
        case(
            "an absolute name",
            &["sweep", "abs.toml", "-q", "--worst-dir", "out/w"],
            0,
            "PASS",
        )
        .file(
            "abs.toml",
            edit("name = \"tank\"", "name = \"/tmp/evenkeel-abs\""),
        ),
    ]
}

/// Cases about scenario files.
fn scenario_cases() -> Vec<Case> {
    let bad = |name: &'static str, body: String, fragment: &str| {
        case(name, &["check", "bad.toml"], 2, fragment).file("bad.toml", body)
    };
    let mut big = base();
    big.push_str(&format!("# {}\n", "x".repeat(9 << 20)));
    vec![
        bad(
            "control character in the name",
            edit("name = \"tank\"", "name = \"ta\\u001b[2Jnk\""),
            "control character U+001B",
        ),
        bad(
            "a name of 10000 characters",
            edit(
                "name = \"tank\"",
                &format!("name = \"{}\"", "n".repeat(10_000)),
            ),
            "at most 256 are allowed",
        ),
        bad(
            "misspelt plant key",
            edit("gain = 1.0\n", "gian = 1.0\n"),
            "did you mean `gain`?",
        ),
        bad(
            "plant keys of the chosen model only",
            edit("gain = 1.0\n", "gain = 1.0\nwobble = 3.0\n"),
            "expected one of `model`, `initial_output`, `gain`\n",
        ),
        bad(
            "misspelt model",
            edit("model = \"integrator\"", "model = \"integrater\""),
            "did you mean \"integrator\"?",
        ),
        bad(
            "misspelt criterion",
            edit("overshoot_pct = {", "overshot_pct = {"),
            "did you mean `overshoot_pct`?",
        ),
        bad(
            "misspelt table",
            edit("[plant]", "[plnat]"),
            "did you mean `plant`?",
        ),
        bad(
            "an array left open on line 1",
            "plant = [\n".into(),
            "key `plant`:",
        ),
        bad(
            "wrong type",
            edit("kp = 2.0", "kp = \"fast\""),
            "invalid type",
        ),
        bad("NaN", edit("kp = 2.0", "kp = nan"), "NaN is not allowed"),
        bad(
            "infinity",
            edit("ki_per_s = 1.0", "ki_per_s = inf"),
            "inf is not allowed",
        ),
        bad(
            "zero period",
            edit("period_s = 0.01", "period_s = 0.0"),
            "controller.period_s",
        ),
        bad(
            "negative duration",
            edit("duration_s = 4.0", "duration_s = -4.0"),
            "scenario.duration_s",
        ),
        bad(
            "too many samples",
            edit("duration_s = 4.0", "duration_s = 1.0e9"),
            "at most 5e6 are allowed",
        ),
        bad(
            "negative hold",
            edit("hold_s = 4.0", "hold_s = -1.0"),
            "segments[0].hold_s",
        ),
        bad(
            "segment after the end",
            edit(
                "segments = [{ to = 1.0, hold_s = 4.0 }]",
                "segments = [{ to = 1.0, hold_s = 4.0 }, { to = 2.0 }]",
            ),
            "it would never act",
        ),
        bad(
            "fault after the end",
            format!(
                "{}\n[[fault]]\nkind = \"dropout\"\nstart_s = 9.0\nduration_s = 1.0\n",
                base()
            ),
            "fault[0].start_s",
        ),
        bad(
            "override after the end",
            format!(
                "{}\n[[override]]\nstart_s = 4.0\nduration_s = 1.0\ncommand = 0.0\n",
                base()
            ),
            "override[0].start_s",
        ),
        bad(
            "a gain range through zero",
            edit(
                "gain = { min = 0.8, max = 1.2 }",
                "gain = { min = -0.5, max = 1.2 }",
            ),
            "includes 0",
        ),
        bad(
            "a range mode outside it",
            edit(
                "gain = { min = 0.8, max = 1.2 }",
                "gain = { min = 0.8, mode = 2.0, max = 1.2 }",
            ),
            "must lie in [0.8, 1.2]",
        ),
        bad(
            "a feather of a vehicle",
            vehicle("mass_kg = 1e-300"),
            "mass_kg >=",
        ),
        bad(
            "a feather at a corner",
            vehicle_range("mass_kg = { min = 1e-9, max = 3000.0 }"),
            "at the corner",
        ),
        bad(
            "a rotor without inertia",
            rotor("inertia_kg_m2 = 1e-12"),
            "inertia_kg_m2 >=",
        ),
        bad(
            "limits Q16.16 cannot hold",
            edit("output_max = 5.0", "output_max = 40000.0"),
            "bad.toml:12:14: key `controller.output_max`",
        ),
        bad(
            "no criteria",
            edit(
                "overshoot_pct = { max = 40.0 }\nsteady_state_error = { max = 0.3 }\n",
                "",
            ),
            "at least one criterion",
        ),
        bad("empty file", String::new(), "missing field"),
        bad("a file too large", big, "larger than 8388608 bytes"),
        case("not UTF-8", &["check", "bad.toml"], 2, "not UTF-8")
            .file("bad.toml", vec![b'#', 0xff, 0xfe, b'\n']),
        case(
            "a device as scenario",
            &["check", "/dev/zero"],
            2,
            "not a regular file",
        ),
        case(
            "a directory as scenario",
            &["check", "out"],
            2,
            "not a regular file",
        ),
        case(
            "a missing scenario",
            &["check", "none.toml"],
            2,
            "none.toml",
        ),
    ]
}

fn vehicle(mass: &str) -> String {
    format!(
        "[scenario]\nname = \"cart\"\nduration_s = 2.0\n[controller]\nperiod_s = 0.01\nkp = 400.0\nki_per_s = 100.0\noutput_min = -1.0\noutput_max = 1.0\n[plant]\nmodel = \"vehicle\"\n{mass}\nactuator_gain_n = 4000.0\n[reference]\nsegments = [{{ to = 1.0, hold_s = 2.0 }}]\n[criteria]\nsteady_state_error = {{ max = 0.5 }}\n"
    )
}

fn vehicle_range(range: &str) -> String {
    format!("{}[uncertainty]\n{range}\n", vehicle("mass_kg = 2000.0"))
}

fn rotor(inertia: &str) -> String {
    format!(
        "[scenario]\nname = \"fan\"\nduration_s = 2.0\n[controller]\nperiod_s = 0.01\nkp = 0.1\nki_per_s = 0.1\noutput_min = 0.0\noutput_max = 1.0\n[plant]\nmodel = \"rotor\"\n{inertia}\ntorque_gain_n_m = 2.0\nviscous_n_m_s = 0.01\ndrag_n_m_s2 = 0.001\n[reference]\nsegments = [{{ to = 10.0, hold_s = 2.0 }}]\n[criteria]\nsteady_state_error = {{ max = 5.0 }}\n"
    )
}

/// Cases about the command line.
fn argument_cases() -> Vec<Case> {
    vec![
        case(
            "misspelt subcommand",
            &["chek", "s.toml"],
            2,
            "a similar subcommand exists: 'check'",
        ),
        case(
            "misspelt flag",
            &["check", "s.toml", "--jsn", "out/r.json"],
            2,
            "a similar argument exists: '--json'",
        ),
        case(
            "count zero",
            &["sweep", "s.toml", "--method", "random", "--count", "0"],
            2,
            "--count must be at least 1",
        ),
        case(
            "a grid too large",
            &[
                "sweep",
                "s.toml",
                "--method",
                "grid",
                "--levels",
                "1000000000",
            ],
            2,
            "variants, at most 100000000 are allowed",
        ),
        case(
            "a hypercube too large",
            &[
                "sweep",
                "s.toml",
                "--method",
                "latin-hypercube",
                "--count",
                "20000000",
            ],
            2,
            "20000000 variants, at most 10000000",
        ),
        case(
            "shard zero",
            &["sweep", "s.toml", "--shard", "0/2"],
            2,
            "shard",
        ),
        case(
            "shard beyond",
            &["sweep", "s.toml", "--shard", "3/2"],
            2,
            "shard",
        ),
        case(
            "no threads",
            &["sweep", "s.toml", "--threads", "0"],
            2,
            "--threads must be at least 1",
        ),
        case(
            "design count too large",
            &["design", "s.toml", "--count", "100001"],
            2,
            "at most 100000",
        ),
        case(
            "nothing to sweep",
            &["sweep", "bare.toml"],
            2,
            "nothing to sweep",
        )
        .file(
            "bare.toml",
            edit("[uncertainty]\ngain = { min = 0.8, max = 1.2 }\n", ""),
        ),
    ]
}

#[test]
fn hostile_outputs() {
    let cases = output_cases();
    for c in &cases {
        run(c, None);
    }
    // A symbolic link and a hard link to the input, as reports.
    #[cfg(unix)]
    {
        let link =
            |w: &Path| std::os::unix::fs::symlink(w.join("s.toml"), w.join("link.json")).unwrap();
        run(
            &case(
                "symbolic link as report",
                &["check", "s.toml", "--json", "link.json"],
                2,
                "a symbolic link",
            ),
            Some(&link),
        );
        let hard = |w: &Path| std::fs::hard_link(w.join("s.toml"), w.join("hard.json")).unwrap();
        run(
            &case(
                "hard link to the input",
                &["check", "s.toml", "--json", "hard.json"],
                2,
                "is an input of this run",
            ),
            Some(&hard),
        );
    }
}

#[test]
fn hostile_scenarios() {
    for c in &scenario_cases() {
        run(c, None);
    }
}

#[test]
fn hostile_arguments() {
    for c in &argument_cases() {
        run(c, None);
    }
}

/// A shard file of the base scenario's 3 corners (shard 1 of 2) and the
/// other half, made by the binary.
fn shards(work: &Path) {
    for i in ["1/2", "2/2"] {
        let save = format!("sh{}.json", &i[..1]);
        let out = common::evenkeel(
            work,
            &["sweep", "s.toml", "-q", "--shard", i, "--save", &save],
        );
        common::assert_exit(&out, 0);
    }
}

/// Rewrites line `n` (0-based) of result file `path` with `f`, and, when
/// `redigest`, the digest line too (as someone covering an edit would).
fn tamper(path: &Path, n: usize, f: impl Fn(&mut serde_json::Value), redigest: bool) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_owned).collect();
    let mut v: serde_json::Value = serde_json::from_str(&lines[n]).unwrap();
    f(&mut v);
    lines[n] = serde_json::to_string(&v).unwrap();
    if redigest {
        let last = lines.len() - 1;
        let mut h = Sha256::new();
        for l in &lines[..last] {
            h.update(l.as_bytes());
            h.update(b"\n");
        }
        let hex: String = h.finalize().iter().map(|b| format!("{b:02x}")).collect();
        lines[last] = format!("{{\"sha256\":\"{hex}\"}}");
    }
    std::fs::write(path, lines.join("\n") + "\n").unwrap();
}

#[test]
fn hostile_result_files() {
    let merge = |name: &'static str, edit: &'static dyn Fn(&Path), fragment: &str| {
        let setup = move |w: &Path| {
            shards(w);
            edit(w);
        };
        run(
            &case(name, &["merge", "sh1.json", "sh2.json"], 2, fragment),
            Some(&setup),
        );
    };
    merge(
        "measured and pass emptied",
        &|w| {
            tamper(
                &w.join("sh1.json"),
                1,
                |v| {
                    v["variant"]["measured"] = serde_json::json!([]);
                    v["variant"]["pass"] = serde_json::json!([]);
                },
                true,
            )
        },
        "0 measured values, 0 verdicts",
    );
    merge(
        "a measured value changed",
        &|w| {
            tamper(
                &w.join("sh1.json"),
                1,
                |v| {
                    v["variant"]["measured"][0] = serde_json::json!(1.0);
                },
                false,
            )
        },
        "SHA-256 digest does not match",
    );
    merge(
        "a verdict flipped, digest redone",
        &|w| {
            tamper(
                &w.join("sh1.json"),
                1,
                |v| {
                    v["variant"]["measured"][0] = serde_json::json!(99.0);
                },
                true,
            )
        },
        "the file says pass, but the measured value 99 gives fail",
    );
    merge(
        "fifty verdicts, digest redone",
        &|w| {
            tamper(
                &w.join("sh1.json"),
                1,
                |v| {
                    v["variant"]["pass"] = serde_json::json!(vec![true; 50]);
                },
                true,
            )
        },
        "50 verdicts",
    );
    merge(
        "criteria emptied, digest redone",
        &|w| {
            tamper(
                &w.join("sh1.json"),
                0,
                |v| {
                    v["criteria"] = serde_json::json!([]);
                },
                true,
            )
        },
        "its criteria [] are not the scenario's",
    );
    merge(
        "envelope emptied, digest redone",
        &|w| {
            let p = w.join("sh1.json");
            let n = std::fs::read_to_string(&p).unwrap().lines().count() - 2;
            tamper(
                &p,
                n,
                |v| {
                    v["envelope"]["output"] = serde_json::json!([[], []]);
                },
                true,
            );
        },
        "envelope `output` has 0 and 0 values",
    );
    merge(
        "values changed, digest redone",
        &|w| {
            tamper(
                &w.join("sh2.json"),
                1,
                |v| {
                    v["variant"]["values"][0] = serde_json::json!(5.0);
                },
                true,
            )
        },
        "parameter values [5.0]",
    );
    merge(
        "a file cut short",
        &|w| {
            let p = w.join("sh1.json");
            let t = std::fs::read_to_string(&p).unwrap();
            std::fs::write(&p, &t[..t.len() / 2]).unwrap();
        },
        "sh1.json",
    );
    merge(
        "the same shard twice",
        &|w| {
            std::fs::copy(w.join("sh1.json"), w.join("sh2.json"))
                .map(drop)
                .unwrap()
        },
        "given twice",
    );
    merge(
        "a shard of another scenario",
        &|w| {
            std::fs::write(w.join("s.toml"), edit("kp = 2.0", "kp = 2.5")).unwrap();
        },
        "fingerprint",
    );
    merge(
        "text after the digest",
        &|w| {
            let p = w.join("sh2.json");
            let mut t = std::fs::read_to_string(&p).unwrap();
            t.push_str("{}\n");
            std::fs::write(&p, t).unwrap();
        },
        "text after the digest line",
    );
    merge(
        "a line of garbage",
        &|w| {
            let p = w.join("sh2.json");
            let t =
                std::fs::read_to_string(&p)
                    .unwrap()
                    .replacen("{\"variant\"", "{\"variantx\"", 1);
            std::fs::write(&p, t).unwrap();
        },
        "sh2.json:2:",
    );
    run(
        &case("a shard missing", &["merge", "sh1.json"], 2, "missing"),
        Some(&shards),
    );
    run(
        &case(
            "a device as result file",
            &["merge", "/dev/zero"],
            2,
            "not a regular file",
        ),
        None,
    );
    run(
        &case(
            "a scenario as result file",
            &["merge", "s.toml"],
            2,
            "not a sweep result file",
        ),
        None,
    );
    run(
        &case(
            "merge over its input",
            &["merge", "sh1.json", "sh2.json", "--save", "sh1.json"],
            2,
            "is an input of this run",
        ),
        Some(&shards),
    );
    run(
        &case(
            "merged, every report in out/",
            &[
                "merge",
                "sh2.json",
                "sh1.json",
                "--json",
                "out/m.json",
                "--save",
                "out/all.json",
                "--worst-dir",
                "out/w",
            ],
            0,
            "PASS",
        ),
        Some(&shards),
    );
}
