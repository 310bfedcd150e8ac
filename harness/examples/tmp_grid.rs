use evenkeel::AntiWindup;
use evenkeel_harness::design::{criterion_margins, run_variants, sample};
use evenkeel_harness::{BackendKind, Scenario};
fn main() {
    let path = std::env::args().nth(1).unwrap();
    let s = Scenario::from_path(&path).unwrap();
    let pts = sample(&s, 0, 0);
    let which: Vec<usize> = (0..pts.len()).collect();
    let mut best = (-1e9, 0.0, 0.0, 0.0, 0.0);
    for ik in 0..14 {
        for it in 0..12 {
            for ib in 0..5 {
                for itt in 0..3 {
                    let kp = 0.006 * 1.2f64.powi(ik);
                    let ti = 60.0 * 1.2f64.powi(it);
                    let b = 0.6 + 0.1 * ib as f64;
                    let tt = ti * [0.25, 0.5, 1.0][itt];
                    let mut c = s.controller;
                    c.kp = kp;
                    c.ki_per_s = kp / ti;
                    c.setpoint_weight = b;
                    c.anti_windup = AntiWindup::BackCalculation {
                        tracking_time_s: tt,
                    };
                    let v = run_variants(&s, &c, &pts, &which, BackendKind::F64);
                    let m = criterion_margins(&s.criteria, &v);
                    let w = m
                        .iter()
                        .map(|x| x.worst_margin)
                        .fold(f64::INFINITY, f64::min);
                    if w > best.0 {
                        best = (w, kp, ti, b, tt);
                    }
                }
            }
        }
    }
    println!("best {:?}", best);
}
