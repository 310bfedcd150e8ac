//! The time series of one run as CSV.

use std::io::Write;

use crate::sim::Recording;

/// CSV with a header line: `t_s, reference, measurement, output, command,
/// applied, accel, jerk, status`, then one column per plant state named
/// `plant_STATE` (units in the names, so every header is unique), then
/// `fault` (1 while an injected fault is active) and `monitor` (the loop
/// monitor's flags). `status` and `monitor` list flags joined by `|` (`-`
/// when none), so no field needs quoting. Numbers are printed shortest
/// round-trip (Rust's `{}` for `f64`), times as computed by
/// [`crate::metrics::sample_time_s`].
///
/// ```
/// use evenkeel_harness::{report::trace_csv, Scenario};
/// let run = Scenario::demo()?.run::<f64>()?;
/// let csv = trace_csv(&run.recording);
/// let header: Vec<&str> = csv.lines().next().unwrap_or("").split(',').collect();
/// let mut unique = header.clone();
/// unique.sort_unstable();
/// unique.dedup();
/// assert_eq!(unique.len(), header.len());
/// assert!(header.contains(&"plant_speed_m_s"));
/// # Ok::<(), Box<dyn std::error::Error>>(())
/// ```
#[must_use]
pub fn trace_csv(rec: &Recording) -> String {
    let mut out = Vec::with_capacity(rec.time_s.len() * 120);
    // Writing into memory cannot fail.
    let _ = write_trace_csv(rec, &mut out);
    String::from_utf8_lossy(&out).into_owned()
}

/// [`trace_csv`] written row by row into `out` (no copy of the whole text
/// in memory).
///
/// # Errors
/// The I/O error of `out`.
pub fn write_trace_csv(rec: &Recording, out: &mut dyn Write) -> std::io::Result<()> {
    out.write_all(b"t_s,reference,measurement,output,command,applied,accel,jerk,status")?;
    for (name, _) in &rec.states {
        write!(out, ",plant_{name}")?;
    }
    out.write_all(b",fault,monitor\n")?;
    let mut last_accel = rec.accel.first().copied().unwrap_or(0.0);
    for i in 0..rec.time_s.len() {
        // As `Recording::jerk`, one sample at a time.
        let jerk = (rec.accel[i] - last_accel) / rec.dt_s;
        last_accel = rec.accel[i];
        write!(
            out,
            "{},{},{},{},{},{},{},{},{}",
            rec.time_s[i],
            rec.reference[i],
            rec.measurement[i],
            rec.output[i],
            rec.command[i],
            rec.applied[i],
            rec.accel[i],
            jerk,
            rec.status[i]
        )?;
        for (_, column) in &rec.states {
            write!(out, ",{}", column[i])?;
        }
        let fault = rec.faults.active.get(i).copied().unwrap_or(false)
            || rec.faults.payload.get(i).copied().unwrap_or(false);
        let monitor = rec.faults.monitor.get(i).copied().unwrap_or_default();
        writeln!(out, ",{},{monitor}", u8::from(fault))?;
    }
    Ok(())
}
