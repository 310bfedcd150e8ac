// Proposed by `evenkeel design` (from the simc proposal, verified on the fixed backend over 73 variants) for scenario `baggage-tug`.
// Engineering aid, not a certified safety function; ISO 26262 / IEC 61508 processes and local regulations govern real deployments.
use evenkeel::fixed::types::I16F16;
use evenkeel::{AntiWindup, Config, Settings};

pub const SETTINGS: Settings = Settings::new(0.01, 1.03, 0.325, -1.0, 1.0)
    .with_setpoint_weight(0.68)
    .with_slew_per_s(0.417)
    .with_anti_windup(AntiWindup::BackCalculation { tracking_time_s: 1.58 });
pub const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);
