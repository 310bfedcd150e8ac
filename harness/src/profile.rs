//! Piecewise-linear time profiles: references, disturbances, gain factors.
//!
//! A [`Profile`] starts at `initial` and runs through [`Segment`]s in
//! order. Each segment moves to its target `to` over `ramp_s` seconds
//! (`ramp_s = 0`: a step at the segment start) and then holds it for
//! `hold_s` seconds. After the last segment the profile keeps its final
//! value. A pulse is a step up followed by a step back down:
//!
//! ```
//! use evenkeel_harness::profile::{Profile, Segment};
//! // 0 for 2 s, a 0.5 s pulse of 800, then a 4 s ramp to 100.
//! let force = Profile::new(0.0, vec![
//!     Segment::hold(2.0),
//!     Segment::step(800.0, 0.5),
//!     Segment::step(0.0, 0.0),
//!     Segment::ramp(100.0, 4.0, 0.0),
//! ]);
//! assert_eq!(force.at(1.99), 0.0);
//! assert_eq!(force.at(2.0), 800.0);
//! assert_eq!(force.at(2.5), 0.0);
//! assert_eq!(force.at(4.5), 50.0);
//! assert_eq!(force.at(99.0), 100.0);
//! ```

/// One piece of a [`Profile`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// Target value; `None` keeps the value reached so far (a plain hold).
    pub to: Option<f64>,
    /// Time to move linearly to `to`, s; 0 is a step.
    pub ramp_s: f64,
    /// Time to hold the target afterwards, s.
    pub hold_s: f64,
}

impl Segment {
    /// Keep the current value for `hold_s` seconds.
    #[must_use]
    pub const fn hold(hold_s: f64) -> Self {
        Self {
            to: None,
            ramp_s: 0.0,
            hold_s,
        }
    }

    /// Jump to `to`, then hold it for `hold_s` seconds.
    #[must_use]
    pub const fn step(to: f64, hold_s: f64) -> Self {
        Self {
            to: Some(to),
            ramp_s: 0.0,
            hold_s,
        }
    }

    /// Move linearly to `to` over `ramp_s` seconds, then hold for `hold_s`.
    #[must_use]
    pub const fn ramp(to: f64, ramp_s: f64, hold_s: f64) -> Self {
        Self {
            to: Some(to),
            ramp_s,
            hold_s,
        }
    }
}

/// One segment of a [`Profile`] placed in time ([`Profile::pieces`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Piece {
    /// When the segment starts, s.
    pub start_s: f64,
    /// Value at its start.
    pub from: f64,
    /// Value at the end of its ramp (= `from` for a pure hold).
    pub to: f64,
    /// Ramp duration, s (0: a step).
    pub ramp_s: f64,
    /// Hold duration after the ramp, s.
    pub hold_s: f64,
}

impl Piece {
    /// When the hold at `to` starts, s.
    #[must_use]
    pub fn hold_start_s(&self) -> f64 {
        self.start_s + self.ramp_s
    }

    /// When the segment ends, s.
    #[must_use]
    pub fn end_s(&self) -> f64 {
        self.start_s + self.ramp_s + self.hold_s
    }
}

/// Start value and segments; evaluate with [`Profile::at`].
///
/// Durations are assumed finite and non-negative (the scenario loader
/// checks them); a negative duration counts as zero.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Profile {
    initial: f64,
    /// `(start_s, from, segment)` with the absolute start time of each segment.
    pieces: Vec<(f64, f64, Segment)>,
}

impl Profile {
    /// A profile from `initial` through `segments`.
    #[must_use]
    pub fn new(initial: f64, segments: Vec<Segment>) -> Self {
        let mut pieces = Vec::with_capacity(segments.len());
        let (mut t, mut value) = (0.0, initial);
        for s in segments {
            pieces.push((t, value, s));
            t += s.ramp_s.max(0.0) + s.hold_s.max(0.0);
            value = s.to.unwrap_or(value);
        }
        Self { initial, pieces }
    }

    /// A profile that stays at `value`.
    #[must_use]
    pub fn constant(value: f64) -> Self {
        Self::new(value, Vec::new())
    }

    /// The value at time `t_s` (before 0: the initial value).
    ///
    /// The segment in force is found by bisection over the start times
    /// (which never decrease), so a run of `n` samples over `m` segments
    /// costs `O(n log m)`, not `O(n m)`.
    #[must_use]
    pub fn at(&self, t_s: f64) -> f64 {
        // The last segment that has started by `t_s` decides the value.
        self.value(
            self.pieces.partition_point(|&(start, _, _)| start <= t_s),
            t_s,
        )
    }

    /// [`Profile::at`] for times that do not decrease from call to call (a
    /// run's samples): `started` keeps the number of segments started at the
    /// last call (0 before the first), and the search walks forward from it
    /// instead of bisecting. The same value, bit for bit; a time earlier than
    /// the last call's bisects again.
    ///
    /// ```
    /// use evenkeel_harness::profile::{Profile, Segment};
    /// let p = Profile::new(0.0, vec![Segment::hold(1.0), Segment::ramp(2.0, 2.0, 1.0)]);
    /// let mut started = 0;
    /// for t in [0.0, 0.5, 1.5, 2.5, 9.0, 0.25] {
    ///     assert_eq!(p.at_forward(&mut started, t), p.at(t));
    /// }
    /// ```
    pub fn at_forward(&self, started: &mut usize, t_s: f64) -> f64 {
        let begun = |i: usize| {
            self.pieces
                .get(i)
                .is_some_and(|&(start, _, _)| start <= t_s)
        };
        let mut n = (*started).min(self.pieces.len());
        if n > 0 && !begun(n - 1) {
            n = self.pieces.partition_point(|&(start, _, _)| start <= t_s);
        }
        while begun(n) {
            n += 1;
        }
        *started = n;
        self.value(n, t_s)
    }

    /// The value at `t_s` when the first `started` segments have started.
    fn value(&self, started: usize, t_s: f64) -> f64 {
        let Some(&(start, from, s)) = started.checked_sub(1).and_then(|i| self.pieces.get(i))
        else {
            return self.initial;
        };
        let to = s.to.unwrap_or(from);
        let ramp = s.ramp_s.max(0.0);
        if ramp > 0.0 && t_s < start + ramp {
            from + (to - from) * (t_s - start) / ramp
        } else {
            to
        }
    }

    /// Multiplies every value of the profile by `factor` (a sweep's
    /// profile factor, e.g. steeper or mirrored ramps).
    ///
    /// ```
    /// use evenkeel_harness::profile::{Profile, Segment};
    /// let mut grade = Profile::new(0.0, vec![Segment::ramp(3.0, 2.0, 1.0)]);
    /// grade.scale(-0.5);
    /// assert_eq!(grade.at(1.0), -0.75);
    /// assert_eq!(grade.at(9.0), -1.5);
    /// ```
    pub fn scale(&mut self, factor: f64) {
        self.initial *= factor;
        for (_, from, s) in &mut self.pieces {
            *from *= factor;
            s.to = s.to.map(|v| v * factor);
        }
    }

    /// The smallest and largest value the profile takes.
    ///
    /// ```
    /// use evenkeel_harness::profile::{Profile, Segment};
    /// let p = Profile::new(1.0, vec![Segment::ramp(4.0, 2.0, 1.0), Segment::step(-2.0, 1.0)]);
    /// assert_eq!(p.range(), (-2.0, 4.0));
    /// ```
    #[must_use]
    pub fn range(&self) -> (f64, f64) {
        self.pieces
            .iter()
            .filter_map(|(_, _, s)| s.to)
            .fold((self.initial, self.initial), |(lo, hi), v| {
                (lo.min(v), hi.max(v))
            })
    }

    /// Total length of the segments, s.
    #[must_use]
    pub fn duration_s(&self) -> f64 {
        self.pieces.last().map_or(0.0, |&(start, _, s)| {
            start + s.ramp_s.max(0.0) + s.hold_s.max(0.0)
        })
    }

    /// The segments in time order, each with its start time and the value
    /// it starts from: a ramp from `from` to `to` over `ramp_s`, then a
    /// hold at `to` for `hold_s` (after the last segment the value holds
    /// for ever).
    ///
    /// ```
    /// use evenkeel_harness::profile::{Profile, Segment};
    /// let p = Profile::new(1.0, vec![Segment::hold(2.0), Segment::ramp(4.0, 3.0, 1.0)]);
    /// let pieces: Vec<_> = p.pieces().collect();
    /// assert_eq!(pieces[1].start_s, 2.0);
    /// assert_eq!((pieces[1].from, pieces[1].to), (1.0, 4.0));
    /// assert_eq!(pieces[1].hold_start_s(), 5.0);
    /// ```
    pub fn pieces(&self) -> impl Iterator<Item = Piece> + '_ {
        self.pieces.iter().map(|&(start_s, from, s)| Piece {
            start_s,
            from,
            to: s.to.unwrap_or(from),
            ramp_s: s.ramp_s.max(0.0),
            hold_s: s.hold_s.max(0.0),
        })
    }

    /// The first segment that changes the value: `(start_s, end_s, from, to)`,
    /// `end_s` being the end of its hold. Step-response metrics refer to it.
    #[must_use]
    pub fn first_change(&self) -> Option<(f64, f64, f64, f64)> {
        self.pieces.iter().find_map(|&(start, from, s)| {
            let to = s.to?;
            (to != from).then_some((
                start,
                start + s.ramp_s.max(0.0) + s.hold_s.max(0.0),
                from,
                to,
            ))
        })
    }
}

/// Time windows `[start_s, start_s + duration_s)` (fault or override
/// windows) and the ones active at a time, found by a cursor that moves
/// with time: each window enters the active list once and leaves it
/// once, so sampling `n` times over `m` windows costs `O(n·a + m log m)`
/// with `a` windows active at once.
///
/// ```
/// use evenkeel_harness::profile::Windows;
/// let mut w = Windows::new([(2.0, 1.0), (0.0, 10.0), (2.5, 0.1)]);
/// assert_eq!(w.active_at(1.0, |_| {}), &[1]);
/// assert_eq!(w.active_at(2.5, |_| {}), &[0, 1, 2]);
/// let mut left = Vec::new();
/// assert_eq!(w.active_at(3.0, |i| left.push(i)), &[1]);
/// assert_eq!(left, [0, 2]);
/// ```
#[derive(Debug, Clone)]
pub struct Windows {
    /// `(start_s, end_s)` in the order given.
    spans: Vec<(f64, f64)>,
    /// Window indices by start time.
    by_start: Vec<usize>,
    /// Next entry of `by_start` not yet started.
    next: usize,
    /// Indices active at `at_s`, in the order given.
    active: Vec<usize>,
    /// Time `active` holds for (NaN before the first call).
    at_s: f64,
}

impl Windows {
    /// Windows from `(start_s, duration_s)` pairs, in the order given.
    #[must_use]
    pub fn new(windows: impl IntoIterator<Item = (f64, f64)>) -> Self {
        let spans: Vec<(f64, f64)> = windows
            .into_iter()
            .map(|(start, duration)| (start, start + duration))
            .collect();
        let mut by_start: Vec<usize> = (0..spans.len()).collect();
        by_start.sort_by(|&a, &b| spans[a].0.total_cmp(&spans[b].0));
        Self {
            spans,
            by_start,
            next: 0,
            active: Vec::new(),
            at_s: f64::NAN,
        }
    }

    /// `true` when window `i` holds `t_s`.
    fn holds(&self, i: usize, t_s: f64) -> bool {
        let (start, end) = self.spans[i];
        t_s >= start && t_s < end
    }

    /// The windows active at `t_s`, in the order given; `left` is called
    /// with each window that was active at the previous time and is not
    /// now. Time going backwards starts over (`left` is then called for
    /// every window not active at `t_s`).
    pub fn active_at(&mut self, t_s: f64, mut left: impl FnMut(usize)) -> &[usize] {
        if t_s == self.at_s {
            return &self.active;
        }
        if t_s < self.at_s {
            self.next = 0;
            self.active.clear();
            for i in 0..self.spans.len() {
                if !self.holds(i, t_s) {
                    left(i);
                }
            }
        }
        self.at_s = t_s;
        while let Some(&i) = self.by_start.get(self.next) {
            if self.spans[i].0 > t_s {
                break;
            }
            self.next += 1;
            self.active.push(i);
        }
        let spans = &self.spans;
        self.active.retain(|&i| {
            let (start, end) = spans[i];
            let keep = t_s >= start && t_s < end;
            if !keep {
                left(i);
            }
            keep
        });
        self.active.sort_unstable();
        &self.active
    }

    /// The windows active at the time of the last [`Windows::active_at`]
    /// call, if that was `t_s`.
    #[must_use]
    pub fn active_if_at(&self, t_s: f64) -> Option<&[usize]> {
        (t_s == self.at_s).then_some(self.active.as_slice())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_ramps_and_holds() {
        let p = Profile::new(
            1.0,
            vec![
                Segment::hold(1.0),
                Segment::ramp(3.0, 2.0, 1.0),
                Segment::step(-1.0, 0.5),
            ],
        );
        let table = [
            (-1.0, 1.0),
            (0.0, 1.0),
            (0.999, 1.0),
            (1.0, 1.0),
            (2.0, 2.0),
            (3.0, 3.0),
            (3.5, 3.0),
            (4.0, -1.0),
            (10.0, -1.0),
        ];
        for (t, want) in table {
            assert!((p.at(t) - want).abs() < 1e-12, "t = {t}: {}", p.at(t));
        }
        assert_eq!(p.duration_s(), 4.5);
        assert_eq!(p.first_change(), Some((1.0, 4.0, 1.0, 3.0)));
    }

    /// The bisection gives the value the segments give walked one by one,
    /// bit for bit, including zero-length segments and steps at equal times.
    #[test]
    fn bisection_matches_a_walk_over_the_segments() {
        let walk = |p: &Profile, t: f64| {
            let mut value = p.initial;
            for &(start, from, s) in &p.pieces {
                if t < start {
                    break;
                }
                let to = s.to.unwrap_or(from);
                let ramp = s.ramp_s.max(0.0);
                value = if ramp > 0.0 && t < start + ramp {
                    from + (to - from) * (t - start) / ramp
                } else {
                    to
                };
            }
            value
        };
        let p = Profile::new(
            0.5,
            vec![
                Segment::step(1.0, 0.0),
                Segment::step(2.0, 0.0),
                Segment::ramp(-3.0, 0.7, 0.3),
                Segment::hold(0.1),
                Segment::ramp(4.0, 0.0, 1.0),
                Segment::ramp(4.0, 2.5, 0.0),
            ],
        );
        for k in -10..800 {
            let t = f64::from(k) * 0.00731;
            assert_eq!(p.at(t).to_bits(), walk(&p, t).to_bits(), "t = {t}");
        }
    }

    /// A million segments: the values at both ends and in between (with
    /// a walk over the segments per sample this test would not finish).
    #[test]
    fn a_million_segments() {
        let segments: Vec<Segment> = (0..1_000_000)
            .map(|i| Segment::step(f64::from(i % 7), 0.001))
            .collect();
        let p = Profile::new(0.0, segments);
        assert_eq!(p.at(0.0005), 0.0);
        assert_eq!(p.at(999.9995), f64::from(999_999 % 7));
        let sum: f64 = (0..100_000).map(|k| p.at(f64::from(k) * 0.01)).sum();
        assert!(sum > 0.0);
    }

    #[test]
    fn constant_and_empty() {
        let p = Profile::constant(2.5);
        assert_eq!(p.at(0.0), 2.5);
        assert_eq!(p.at(1e9), 2.5);
        assert_eq!(p.duration_s(), 0.0);
        assert_eq!(p.first_change(), None);
    }
}
