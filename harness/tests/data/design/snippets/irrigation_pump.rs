// Proposed by `evenkeel design` (from the simc proposal, verified on the fixed backend over 73 variants) for scenario `irrigation-pump`.
// Engineering aid, not a certified safety function; ISO 26262 / IEC 61508 processes and local regulations govern real deployments.
use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, Config, Settings};

pub const SETTINGS: Settings = Settings::new(0.05, 0.00165, 0.000846, 0.133, 1.0)
    .with_slew_per_s(0.225)
    .with_measurement_range(-50.0, 1000.0)
    .with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 0.975 });
pub const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);
