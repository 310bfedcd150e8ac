//! Fixed-point rounding against exact rational arithmetic
//! (`num-rational` `BigRational`, a general-purpose arbitrary-precision
//! library): every product must equal `floor(exact + 1/2)` (round to
//! nearest, ties toward +∞), saturated to the destination format.

use evenkeel::FixedCoef;
use evenkeel::q::{accum_to_signal, round_shift};
use fixed::types::{I16F16, I32F32};
use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{One, Signed, ToPrimitive};
use proptest::prelude::*;

fn pow2(n: u32) -> BigRational {
    BigRational::from_integer(BigInt::one() << n)
}

/// floor(x + 1/2), saturated into [lo, hi].
fn nearest_up(x: &BigRational, lo: i64, hi: i64) -> i64 {
    let half = BigRational::new(BigInt::one(), BigInt::from(2));
    let r = (x + half).floor().to_integer();
    r.to_i64().map_or(
        if r.sign() == num_bigint::Sign::Minus {
            lo
        } else {
            hi
        },
        |v| v.clamp(lo, hi),
    )
}

fn coefficient() -> impl Strategy<Value = FixedCoef> {
    // Any magnitude from 1e-9 to 2e9, either sign.
    (-9.0f64..9.3, any::<bool>()).prop_filter_map("fits", |(exp, neg)| {
        let v = 10f64.powf(exp) * if neg { -1.0 } else { 1.0 };
        FixedCoef::from_f64(v, 0)
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

    #[test]
    fn scale_is_round_to_nearest(c in coefficient(), x in any::<i32>()) {
        let exact = BigRational::from_integer(BigInt::from(x)) * BigRational::from_integer(BigInt::from(c.mantissa()))
            / pow2(c.shift());
        let want = nearest_up(&exact, i64::from(i32::MIN), i64::from(i32::MAX));
        let got = c.scale(I16F16::from_bits(x)).to_bits();
        prop_assert_eq!(i64::from(got), want);
    }

    #[test]
    fn scale_into_rounds_at_accumulator_precision(
        exp in -9.0f64..4.4, x in any::<i32>(), acc in -(1i64 << 48)..(1i64 << 48)
    ) {
        let Some(c) = FixedCoef::from_f64(10f64.powf(exp), 16) else { return Ok(()); };
        // Product in Q32.32 units: x·m / 2^(shift − 16).
        let exact = BigRational::from_integer(BigInt::from(x)) * BigRational::from_integer(BigInt::from(c.mantissa()))
            / pow2(c.shift() - 16);
        let want = nearest_up(&exact, i64::MIN, i64::MAX).saturating_add(acc);
        let got = c.scale_into(I32F32::from_bits(acc), I16F16::from_bits(x)).to_bits();
        prop_assert_eq!(got, want);
    }

    #[test]
    fn accumulator_narrowing_is_round_to_nearest(acc in any::<i64>()) {
        let exact = BigRational::from_integer(BigInt::from(acc)) / pow2(16);
        let want = nearest_up(&exact, i64::from(i32::MIN), i64::from(i32::MAX));
        prop_assert_eq!(i64::from(accum_to_signal(I32F32::from_bits(acc)).to_bits()), want);
    }

    #[test]
    fn round_shift_is_round_to_nearest(p in -(1i64 << 62)..(1i64 << 62), s in 0u32..=62) {
        let exact = BigRational::from_integer(BigInt::from(p)) / pow2(s);
        prop_assert_eq!(round_shift(p, s), nearest_up(&exact, i64::MIN, i64::MAX));
    }

    #[test]
    fn coefficient_from_f64_is_nearest(v in -2.0e9f64..2.0e9) {
        let Some(c) = FixedCoef::from_f64(v, 0) else { return Ok(()); };
        // |stored − v| ≤ half a mantissa step 2^-shift (exact comparison).
        let stored = BigRational::from_integer(BigInt::from(c.mantissa())) / pow2(c.shift());
        let exact = BigRational::from_float(v).unwrap();
        let err = (stored - exact).abs();
        prop_assert!(err * pow2(c.shift()) <= BigRational::new(BigInt::one(), BigInt::from(2)));
    }
}

// The 16-bit backend (`Slim16`): the same contract with 16-bit signals, a
// 16-bit mantissa and a state with 13 extra fraction bits.
mod slim16 {
    use super::{nearest_up, pow2};
    use evenkeel::{Backend, Slim16, SlimCoef};
    use num_bigint::BigInt;
    use num_rational::BigRational;
    use proptest::prelude::*;

    fn coefficient() -> impl Strategy<Value = SlimCoef> {
        (-7.0f64..4.5, any::<bool>()).prop_filter_map("fits", |(exp, neg)| {
            let v = 10f64.powf(exp) * if neg { -1.0 } else { 1.0 };
            SlimCoef::from_f64(v, 0)
        })
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

        #[test]
        fn scale_is_round_to_nearest(c in coefficient(), x in any::<i16>()) {
            let exact = BigRational::from_integer(BigInt::from(x))
                * BigRational::from_integer(BigInt::from(c.mantissa()))
                / pow2(c.shift());
            let want = nearest_up(&exact, i64::from(i16::MIN), i64::from(i16::MAX));
            prop_assert_eq!(i64::from(c.scale(Slim16::from_raw(x)).raw()), want);
        }

        #[test]
        fn scale_into_rounds_at_state_precision(
            exp in -7.0f64..-0.01, x in any::<i16>(), acc in -(1i32 << 29)..(1i32 << 29)
        ) {
            let Some(c) = SlimCoef::from_f64(10f64.powf(exp), 15) else { return Ok(()); };
            // Product in state units: x·m / 2^(shift − 13).
            let exact = BigRational::from_integer(BigInt::from(x))
                * BigRational::from_integer(BigInt::from(c.mantissa()))
                / pow2(c.shift() - 13);
            let want = (nearest_up(&exact, i64::from(i32::MIN), i64::from(i32::MAX)) + i64::from(acc))
                .clamp(i64::from(i32::MIN), i64::from(i32::MAX));
            prop_assert_eq!(i64::from(c.scale_into(acc, Slim16::from_raw(x))), want);
        }

        #[test]
        fn state_narrowing_is_round_to_nearest(acc in any::<i32>()) {
            let exact = BigRational::from_integer(BigInt::from(acc)) / pow2(13);
            let want = nearest_up(&exact, i64::from(i16::MIN), i64::from(i16::MAX));
            prop_assert_eq!(i64::from(Slim16::narrow(acc).raw()), want);
        }

        #[test]
        fn coefficient_from_f64_is_nearest(v in -32_000.0f64..32_000.0) {
            let Some(c) = SlimCoef::from_f64(v, 0) else { return Ok(()); };
            // |stored − v| ≤ half a mantissa step, and the mantissa uses 15 bits.
            let step = 2f64.powi(-(c.shift() as i32));
            prop_assert!((c.to_f64() - v).abs() <= step / 2.0);
            prop_assert!(c.mantissa().unsigned_abs() >= 1 << 14 || c.shift() == 30);
        }
    }
}
