//! What happened in one step: which limit acted, which fault was seen.

use core::fmt;

/// Set of flags returned with every command.
///
/// ```
/// use evenkeel::Status;
/// let s = Status::CLAMP_HIGH | Status::INTEGRATOR_HELD;
/// assert!(s.contains(Status::CLAMP_HIGH));
/// assert!(s.is_limited());
/// assert!(!s.is_fault());
/// ```
#[derive(Clone, Copy, PartialEq, Eq, Hash, Default)]
pub struct Status(u16);

impl Status {
    /// No flag.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::NONE.bits(), 0);
    /// assert_eq!(Status::NONE.names().count(), 0);
    /// assert!(!Status::NONE.is_limited() && !Status::NONE.is_fault());
    /// ```
    pub const NONE: Self = Self(0);
    /// The command was clamped to `output_max`.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::CLAMP_HIGH.bits(), 1 << 0);
    /// assert!(Status::CLAMP_HIGH.is_limited());
    /// ```
    pub const CLAMP_HIGH: Self = Self(1 << 0);
    /// The command was clamped to `output_min`.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::CLAMP_LOW.bits(), 1 << 1);
    /// assert!(Status::CLAMP_LOW.is_limited());
    /// ```
    pub const CLAMP_LOW: Self = Self(1 << 1);
    /// The slew limiter shortened the command change.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::SLEW.bits(), 1 << 2);
    /// assert!(Status::SLEW.is_limited());
    /// ```
    pub const SLEW: Self = Self(1 << 2);
    /// The actuator reported (in [`crate::Input::applied`]) a value other
    /// than the last command: something downstream limited or overrode it.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::DOWNSTREAM.bits(), 1 << 3);
    /// assert!(Status::DOWNSTREAM.is_limited());
    /// ```
    pub const DOWNSTREAM: Self = Self(1 << 3);
    /// Conditional integration held the integrator this step.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::INTEGRATOR_HELD.bits(), 1 << 4);
    /// assert!(!Status::INTEGRATOR_HELD.is_limited()); // a consequence, not a limiter
    /// ```
    pub const INTEGRATOR_HELD: Self = Self(1 << 4);
    /// The error was inside the deadband.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::DEADBAND.bits(), 1 << 5);
    /// assert!(Status::DEADBAND.names().eq(["deadband"]));
    /// ```
    pub const DEADBAND: Self = Self(1 << 5);
    /// The controller tracked an external actuator value this step.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::TRACKING.bits(), 1 << 6);
    /// assert!(!Status::TRACKING.is_fault());
    /// ```
    pub const TRACKING: Self = Self(1 << 6);
    /// This step engaged the controller bumplessly.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::ENGAGED.bits(), 1 << 7);
    /// assert!(Status::ENGAGED.names().eq(["engaged"]));
    /// ```
    pub const ENGAGED: Self = Self(1 << 7);
    /// Fault: a non-finite input (float backends); the last command was held
    /// and the state was not touched.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::NON_FINITE.bits(), 1 << 8);
    /// assert!(Status::NON_FINITE.is_fault());
    /// ```
    pub const NON_FINITE: Self = Self(1 << 8);
    /// Fault: the measurement was outside its configured range and was
    /// clamped into it.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::MEASUREMENT_RANGE.bits(), 1 << 9);
    /// assert!(Status::MEASUREMENT_RANGE.is_fault());
    /// ```
    pub const MEASUREMENT_RANGE: Self = Self(1 << 9);
    /// Fault: the setpoint was outside the measurement range and was clamped
    /// into it.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::SETPOINT_RANGE.bits(), 1 << 10);
    /// assert!(Status::SETPOINT_RANGE.is_fault());
    /// ```
    pub const SETPOINT_RANGE: Self = Self(1 << 10);

    const LIMITS: u16 = Self::CLAMP_HIGH.0 | Self::CLAMP_LOW.0 | Self::SLEW.0 | Self::DOWNSTREAM.0;
    const FAULTS: u16 = Self::NON_FINITE.0 | Self::MEASUREMENT_RANGE.0 | Self::SETPOINT_RANGE.0;

    const NAMES: [(Self, &'static str); 11] = [
        (Self::CLAMP_HIGH, "clamp_high"),
        (Self::CLAMP_LOW, "clamp_low"),
        (Self::SLEW, "slew"),
        (Self::DOWNSTREAM, "downstream"),
        (Self::INTEGRATOR_HELD, "integrator_held"),
        (Self::DEADBAND, "deadband"),
        (Self::TRACKING, "tracking"),
        (Self::ENGAGED, "engaged"),
        (Self::NON_FINITE, "non_finite"),
        (Self::MEASUREMENT_RANGE, "measurement_range"),
        (Self::SETPOINT_RANGE, "setpoint_range"),
    ];

    /// The raw bits (stable: bit n is the n-th constant above).
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!((Status::SLEW | Status::DEADBAND).bits(), 0b10_0100);
    /// ```
    #[must_use]
    pub const fn bits(self) -> u16 {
        self.0
    }

    /// Flags from raw bits; unknown bits are dropped.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert_eq!(Status::from_bits(0b101), Status::CLAMP_HIGH | Status::SLEW);
    /// assert_eq!(Status::from_bits(0xffff).bits(), 0x07ff); // unknown bits dropped
    /// ```
    #[must_use]
    pub const fn from_bits(bits: u16) -> Self {
        Self(bits & 0x07ff)
    }

    /// `true` if every flag of `other` is set.
    ///
    /// ```
    /// use evenkeel::Status;
    /// let s = Status::CLAMP_LOW | Status::SLEW;
    /// assert!(s.contains(Status::SLEW) && s.contains(Status::NONE));
    /// assert!(!s.contains(Status::SLEW | Status::DEADBAND)); // every flag, not any
    /// ```
    #[must_use]
    pub const fn contains(self, other: Self) -> bool {
        self.0 & other.0 == other.0
    }

    /// `true` if any limiter (clamp, slew, downstream) acted.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert!((Status::DEADBAND | Status::DOWNSTREAM).is_limited());
    /// assert!(!(Status::INTEGRATOR_HELD | Status::ENGAGED).is_limited());
    /// ```
    #[must_use]
    pub const fn is_limited(self) -> bool {
        self.0 & Self::LIMITS != 0
    }

    /// `true` if any fault flag is set.
    ///
    /// ```
    /// use evenkeel::Status;
    /// assert!((Status::SLEW | Status::SETPOINT_RANGE).is_fault());
    /// assert!(!(Status::CLAMP_HIGH | Status::TRACKING).is_fault());
    /// ```
    #[must_use]
    pub const fn is_fault(self) -> bool {
        self.0 & Self::FAULTS != 0
    }

    /// Add `flag` if `condition` holds (no branch needed).
    #[inline(always)]
    pub(crate) fn set_if(&mut self, condition: bool, flag: Self) {
        self.0 |= u16::from(condition) * flag.0;
    }

    /// Each set flag's name, in bit order (`clamp_high`, `slew`, …).
    ///
    /// ```
    /// use evenkeel::Status;
    /// let s = Status::SLEW | Status::CLAMP_HIGH;
    /// assert!(s.names().eq(["clamp_high", "slew"])); // bit order, not insertion order
    /// ```
    pub fn names(self) -> impl Iterator<Item = &'static str> {
        Self::NAMES
            .into_iter()
            .filter(move |(flag, _)| self.contains(*flag))
            .map(|(_, name)| name)
    }
}

impl core::ops::BitOr for Status {
    type Output = Self;
    fn bitor(self, rhs: Self) -> Self {
        Self(self.0 | rhs.0)
    }
}

impl core::ops::BitOrAssign for Status {
    fn bitor_assign(&mut self, rhs: Self) {
        self.0 |= rhs.0;
    }
}

impl fmt::Debug for Status {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("Status(")?;
        fmt::Display::fmt(self, f)?;
        f.write_str(")")
    }
}

impl fmt::Display for Status {
    /// Flag names joined by `|`, or `-` when none is set.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut first = true;
        for name in self.names() {
            if !first {
                f.write_str("|")?;
            }
            f.write_str(name)?;
            first = false;
        }
        if first {
            f.write_str("-")?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use std::string::ToString;

    #[test]
    fn names_and_display() {
        let s = Status::SLEW | Status::MEASUREMENT_RANGE;
        assert_eq!(s.to_string(), "slew|measurement_range");
        assert_eq!(Status::NONE.to_string(), "-");
        assert!(s.is_fault() && s.is_limited());
        assert_eq!(Status::from_bits(0xffff).bits(), 0x07ff);
    }

    #[test]
    fn every_flag_has_a_distinct_bit_and_name() {
        let mut seen = 0u16;
        for (flag, _) in Status::NAMES {
            assert_eq!(flag.bits().count_ones(), 1);
            assert_eq!(seen & flag.bits(), 0);
            seen |= flag.bits();
        }
        assert_eq!(seen, 0x07ff);
    }

    /// Which flags count as a limit and which as a fault, flag by flag (the
    /// table is the documented contract of `is_limited` and `is_fault`).
    #[test]
    fn limits_and_faults_per_flag() {
        let limits = [
            Status::CLAMP_HIGH,
            Status::CLAMP_LOW,
            Status::SLEW,
            Status::DOWNSTREAM,
        ];
        let faults = [
            Status::NON_FINITE,
            Status::MEASUREMENT_RANGE,
            Status::SETPOINT_RANGE,
        ];
        for (flag, name) in Status::NAMES {
            assert_eq!(flag.is_limited(), limits.contains(&flag), "{name}");
            assert_eq!(flag.is_fault(), faults.contains(&flag), "{name}");
        }
        assert!(!Status::NONE.is_limited() && !Status::NONE.is_fault());
    }

    #[test]
    fn contains_needs_every_bit() {
        let s = Status::SLEW | Status::DEADBAND;
        assert!(s.contains(Status::SLEW));
        assert!(s.contains(s));
        assert!(s.contains(Status::NONE));
        assert!(!Status::SLEW.contains(s));
        assert!(!s.contains(Status::TRACKING));
    }

    #[test]
    fn union_is_idempotent() {
        assert_eq!((Status::SLEW | Status::SLEW).bits(), 1 << 2);
        let mut s = Status::NONE;
        s |= Status::ENGAGED;
        s |= Status::ENGAGED;
        s |= Status::CLAMP_LOW;
        assert_eq!(s.bits(), (1 << 7) | (1 << 1));
        assert_eq!(Status::from_bits(0x0800), Status::NONE);
        assert_eq!(Status::from_bits(0x0805).bits(), 0x0005);
    }

    #[test]
    fn debug_shows_the_names() {
        let s = Status::CLAMP_HIGH | Status::TRACKING | Status::NON_FINITE;
        assert_eq!(
            std::format!("{s:?}"),
            "Status(clamp_high|tracking|non_finite)"
        );
        assert_eq!(std::format!("{:?}", Status::NONE), "Status(-)");
        assert_eq!(Status::DEADBAND.to_string(), "deadband");
    }
}
