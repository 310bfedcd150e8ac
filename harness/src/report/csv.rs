//! The time series of one run as CSV.

use std::fmt::Write;

use crate::sim::Recording;

/// CSV with a header line: `t_s, reference, measurement, output, command,
/// applied, accel, jerk, status`, then one column per plant state (units
/// in the names), then `fault` (1 while an injected fault is active) and
/// `monitor` (the loop monitor's flags). `status` and `monitor` list flags
/// joined by `|` (`-` when none), so no field needs quoting.
#[must_use]
pub fn trace_csv(rec: &Recording) -> String {
    let mut out = String::with_capacity(rec.time_s.len() * 120);
    out.push_str("t_s,reference,measurement,output,command,applied,accel,jerk,status");
    for (name, _) in &rec.states {
        out.push(',');
        out.push_str(name);
    }
    out.push_str(",fault,monitor\n");
    let jerk = rec.jerk();
    for i in 0..rec.time_s.len() {
        let _ = write!(
            out,
            "{},{},{},{},{},{},{},{},{}",
            rec.time_s[i],
            rec.reference[i],
            rec.measurement[i],
            rec.output[i],
            rec.command[i],
            rec.applied[i],
            rec.accel[i],
            jerk[i],
            rec.status[i]
        );
        for (_, column) in &rec.states {
            let _ = write!(out, ",{}", column[i]);
        }
        let fault = rec.faults.active.get(i).copied().unwrap_or(false)
            || rec.faults.payload.get(i).copied().unwrap_or(false);
        let monitor = rec.faults.monitor.get(i).copied().unwrap_or_default();
        let _ = write!(out, ",{},{monitor}", u8::from(fault));
        out.push('\n');
    }
    out
}
