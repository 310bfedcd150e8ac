//! The controller storage that C owns, and every access through a C
//! pointer. All the crate's `unsafe` is in this module, one operation per
//! block, each with the reason it is sound.
//!
//! The storage types (`EkcLoop`, `EkcSlimLoop`) are opaque byte arrays of
//! published size and alignment. Inside is a `Slot`: a tag word, then
//! the controller. Only `install` writes the tag, always together with a
//! whole valid controller; every other access reads the tag first and
//! refuses storage without it (`EKC_ERR_UNCONFIGURED`), so zeroed storage
//! (a C `static`) is never taken for a controller.

use core::ffi::c_char;
use core::mem::{align_of, size_of};

use evenkeel::fixed::types::I16F16;
use evenkeel::{Backend, Controller, Slim16};

use crate::codes::{EKC_ERR_MISALIGNED, EKC_ERR_NULL, EKC_ERR_UNCONFIGURED, EkcCode};
use crate::types::{EkcCoef, EkcCoefficients, EkcExtra, EkcSettings, EkcSlimExtra};

/// Bytes of an `EkcLoop`.
pub const EKC_LOOP_SIZE: usize = 152;
/// Alignment of an `EkcLoop` in bytes.
pub const EKC_LOOP_ALIGN: usize = 8;
/// Bytes of an `EkcSlimLoop`.
pub const EKC_SLIM_LOOP_SIZE: usize = 76;
/// Alignment of an `EkcSlimLoop` in bytes.
pub const EKC_SLIM_LOOP_ALIGN: usize = 4;

/// Storage for one Q16.16 controller (`int32_t` signals). Declare it where
/// it lives (a `static`, a struct member); it is configured by
/// `ekc_configure` or `ekc_load` and then used only through `ekc_…`
/// functions. Copying a configured one copies the controller.
#[repr(C, align(8))]
pub struct EkcLoop {
    /// The controller's state: not to be read or written by C.
    pub opaque: [u8; EKC_LOOP_SIZE],
}

/// Storage for one 16-bit controller (`int16_t` signals); see `EkcLoop`.
#[repr(C, align(4))]
pub struct EkcSlimLoop {
    /// The controller's state: not to be read or written by C.
    pub opaque: [u8; EKC_SLIM_LOOP_SIZE],
}

/// What the storage holds once configured. The controller is first, so
/// that its address is the storage's (no offset to add on every call).
#[repr(C)]
pub(crate) struct Slot<B: Backend> {
    controller: Controller<B>,
    /// [`Storage::TAG`].
    tag: u32,
}

/// A C storage type and the controller it holds.
pub(crate) trait Storage {
    /// The controller's backend.
    type Backend: Backend;
    /// The tag of a configured storage of this type (differs per type;
    /// zeroed storage has none). Below 256: Armv6-M and Armv7-M compare
    /// with it as an 8-bit immediate, with no constant to load first.
    const TAG: u32;
}

impl Storage for EkcLoop {
    type Backend = I16F16;
    const TAG: u32 = b'q' as u32;
}

impl Storage for EkcSlimLoop {
    type Backend = Slim16;
    const TAG: u32 = b's' as u32;
}

// The slot fits the published storage, and the storage's alignment is
// enough for it (checked by the compiler for every target built).
const _: () = {
    assert!(size_of::<Slot<I16F16>>() <= size_of::<EkcLoop>());
    assert!(align_of::<Slot<I16F16>>() <= align_of::<EkcLoop>());
    assert!(size_of::<EkcLoop>() == EKC_LOOP_SIZE && align_of::<EkcLoop>() == EKC_LOOP_ALIGN);
    assert!(size_of::<Slot<Slim16>>() <= size_of::<EkcSlimLoop>());
    assert!(align_of::<Slot<Slim16>>() <= align_of::<EkcSlimLoop>());
    assert!(
        size_of::<EkcSlimLoop>() == EKC_SLIM_LOOP_SIZE
            && align_of::<EkcSlimLoop>() == EKC_SLIM_LOOP_ALIGN
    );
};

/// The slot in `storage`, if the pointer is non-null and aligned.
#[inline(always)]
fn slot<S: Storage>(storage: *const S) -> Result<*mut Slot<S::Backend>, EkcCode> {
    if storage.is_null() {
        Err(EKC_ERR_NULL)
    } else if !storage.is_aligned() {
        Err(EKC_ERR_MISALIGNED)
    } else {
        Ok(storage.cast_mut().cast())
    }
}

/// The tag word of the storage behind a checked slot pointer.
#[inline(always)]
fn tag<B: Backend>(slot: *mut Slot<B>) -> u32 {
    let tag = slot
        .wrapping_byte_add(core::mem::offset_of!(Slot<B>, tag))
        .cast::<u32>();
    // SAFETY: `slot` is non-null and aligned (from `slot()`) and points to
    // C storage of the published size (header contract), which is at least
    // the slot's size (asserted above); `tag` is the address of the slot's
    // `u32` field inside it (aligned: the slot is), and any bytes are a
    // valid `u32`.
    unsafe { tag.read() }
}

/// Put a new controller (and the tag) into `storage`, whatever it held.
pub(crate) fn install<S: Storage>(
    storage: *mut S,
    controller: Controller<S::Backend>,
) -> Result<(), EkcCode> {
    let slot = slot(storage)?;
    // SAFETY: non-null, aligned, in bounds as in `tag`; C passes no other
    // pointer to this storage while the call runs (one caller at a time,
    // header contract); `write` neither reads nor drops the old bytes.
    unsafe {
        slot.write(Slot {
            tag: S::TAG,
            controller,
        });
    }
    Ok(())
}

/// Run `f` on the controller in `storage`, if it was configured.
pub(crate) fn with_mut<S: Storage, T>(
    storage: *mut S,
    f: impl FnOnce(&mut Controller<S::Backend>) -> T,
) -> Result<T, EkcCode> {
    let slot = slot(storage)?;
    if tag(slot) != S::TAG {
        return Err(EKC_ERR_UNCONFIGURED);
    }
    // SAFETY: non-null, aligned, in bounds as in `tag`. The tag is written
    // only by `install`, together with a whole valid controller, and C only
    // moves these bytes as a whole (the storage is opaque), so they hold a
    // valid `Controller`. No other reference to it exists while `f` runs:
    // C makes one call at a time per controller (header contract), and the
    // reference does not outlive this function.
    let controller = unsafe { &mut (*slot).controller };
    Ok(f(controller))
}

/// Run `f` on the controller in `storage` (read only), if it was
/// configured.
pub(crate) fn with_ref<S: Storage, T>(
    storage: *const S,
    f: impl FnOnce(&Controller<S::Backend>) -> T,
) -> Result<T, EkcCode> {
    let slot = slot(storage)?;
    if tag(slot) != S::TAG {
        return Err(EKC_ERR_UNCONFIGURED);
    }
    // SAFETY: as in `with_mut`; only a shared reference is made, so the
    // storage may be read-only memory.
    let controller = unsafe { &(*slot).controller };
    Ok(f(controller))
}

/// Run `f` on the controller in `storage` and the optional inputs of one
/// step, if every check passes: `extra` non-null and aligned, then
/// `storage` non-null and aligned, then its tag. Otherwise the code of the
/// first check that fails in that order ([`refused`]), and nothing runs.
///
/// The common path tests both pointers at once: two null tests, one
/// alignment test for both, the tag. `extra` is borrowed, not copied: the
/// step reads each field where it needs it. C passes pointers of one call
/// that do not overlap (header contract).
#[inline(always)]
pub(crate) fn with_step<S: Storage, X: Plain, T>(
    storage: *mut S,
    extra: *const X,
    f: impl FnOnce(&mut Controller<S::Backend>, &X) -> T,
) -> Result<T, EkcCode> {
    let (s, x) = (storage.addr(), extra.addr());
    let aligned = s & (align_of::<S>() - 1) == 0 && x & (align_of::<X>() - 1) == 0;
    if s == 0 || x == 0 || !aligned {
        return Err(refused(storage, extra));
    }
    let slot = storage.cast::<Slot<S::Backend>>();
    if tag(slot) != S::TAG {
        return Err(EKC_ERR_UNCONFIGURED);
    }
    // SAFETY: as in `with_mut` (non-null and aligned: tested above; the
    // tag says a whole valid controller is there). The reference does not
    // outlive this function.
    let controller = unsafe { &mut (*slot).controller };
    // SAFETY: non-null and aligned (tested above): a C pointer to a whole
    // `X` that nothing writes during the call and that overlaps neither
    // the storage nor anything `f` writes (header contract), or a constant
    // of this crate; the reference lives only during `f`. Any bit pattern
    // is a valid `X` (`Plain`).
    let extra = unsafe { &*extra };
    Ok(f(controller, extra))
}

/// Why [`with_step`] refused its pointers: the first failing check of
/// extra null, extra misaligned, storage null, storage misaligned. Off
/// the common path.
#[cold]
#[inline(never)]
fn refused<S, X>(storage: *const S, extra: *const X) -> EkcCode {
    match checked(extra).and_then(|()| checked(storage)) {
        Err(code) => code,
        // Not reached (`with_step` calls this only when a pointer test
        // failed); the storage is then not to be read.
        Ok(()) => EKC_ERR_UNCONFIGURED,
    }
}

/// `entry(storage, setpoint, measurement, extra)`: the step function of a
/// format called from another function of this crate (`ekc_step` with no
/// extra inputs, `ekc_track` after the engage), so that the controller's
/// step is compiled once, inside `entry`.
#[inline(always)]
pub(crate) fn forward<S, R: Copy, X, T>(
    entry: unsafe extern "C" fn(*mut S, R, R, *const X) -> T,
    storage: *mut S,
    setpoint: R,
    measurement: R,
    extra: *const X,
) -> T {
    // SAFETY: `entry` is one of this crate's step functions, which check
    // both pointers before any access and have the contract of the caller
    // (an `ekc_` function): `storage` and `extra` are the caller's C
    // arguments under that same contract, or `extra` is a constant of this
    // crate (valid, aligned, read only).
    unsafe { entry(storage, setpoint, measurement, extra) }
}

/// `Ok` if `p` is non-null and aligned.
#[inline(always)]
fn checked<T>(p: *const T) -> Result<(), EkcCode> {
    if p.is_null() {
        Err(EKC_ERR_NULL)
    } else if !p.is_aligned() {
        Err(EKC_ERR_MISALIGNED)
    } else {
        Ok(())
    }
}

/// Types C passes by pointer that are valid for every bit pattern
/// (integers and `f64`s only, no `bool`, enum or reference).
pub(crate) trait Plain: Copy {}
impl Plain for i32 {}
impl Plain for i16 {}
impl Plain for EkcSettings {}
impl Plain for EkcCoefficients {}
impl Plain for EkcCoef {}
impl Plain for EkcExtra {}
impl Plain for EkcSlimExtra {}

/// A copy of the value C points to.
pub(crate) fn read<T: Plain>(p: *const T) -> Result<T, EkcCode> {
    checked(p)?;
    // SAFETY: non-null and aligned (checked above); C passes a pointer to a
    // whole `T` (header contract) that nothing writes during the call; any
    // bit pattern is a valid `T` (`Plain`).
    Ok(unsafe { p.read() })
}

/// An out-pointer checked before any work is done, so that a bad one
/// leaves the controller untouched.
pub(crate) struct Out<T: Plain>(*mut T);

impl<T: Plain> Out<T> {
    /// `p`, if non-null and aligned.
    #[inline(always)]
    pub(crate) fn new(p: *mut T) -> Result<Self, EkcCode> {
        if p.is_null() {
            Err(EKC_ERR_NULL)
        } else if !p.is_aligned() {
            Err(EKC_ERR_MISALIGNED)
        } else {
            Ok(Self(p))
        }
    }

    /// Store the result.
    #[inline(always)]
    pub(crate) fn put(self, value: T) {
        // SAFETY: non-null and aligned (checked in `new`); C passes a
        // pointer to writable room for a whole `T` that nothing else uses
        // during the call (header contract); `T` has no drop glue.
        unsafe { self.0.write(value) }
    }
}

/// The writable bytes of a C text buffer, if there are any.
pub(crate) fn text_buffer<'a>(buffer: *mut c_char, capacity: usize) -> Option<&'a mut [u8]> {
    if buffer.is_null() || capacity == 0 || capacity > isize::MAX as usize {
        return None;
    }
    // SAFETY: non-null; C passes `capacity` writable bytes at `buffer`
    // (header contract) that nothing else uses during the call, and
    // `capacity` ≤ isize::MAX (checked); `u8` has alignment 1 and is valid
    // for any bytes; the slice lives only for the call (`ekc_code_text`).
    Some(unsafe { core::slice::from_raw_parts_mut(buffer.cast::<u8>(), capacity) })
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    #[test]
    fn published_sizes_are_exact_on_this_target() {
        // No byte wasted: the header's sizes are the slots' (rounded up to
        // the alignment).
        assert_eq!(size_of::<Slot<I16F16>>(), EKC_LOOP_SIZE);
        assert_eq!(
            size_of::<Slot<Slim16>>().next_multiple_of(4),
            EKC_SLIM_LOOP_SIZE
        );
    }

    /// Every pointer path of the interface with real pointers (the test
    /// Miri runs: `cargo +nightly miri test -p evenkeel-c --lib`).
    #[test]
    #[allow(clippy::multiple_unsafe_ops_per_block)] // one contract for the whole sequence of calls
    fn calls_through_pointers() {
        use crate::codes::*;
        use crate::common_api::{ekc_code_text, ekc_settings_init};
        use crate::fixed_api::*;
        use crate::slim_api::{ekc_slim_configure, ekc_slim_step};
        use crate::types::{
            EKC_STATUS_CLAMP_HIGH, EKC_STATUS_TRACKING, EkcExtra, EkcSettings, result_code,
            result_command, result_status,
        };
        use core::mem::MaybeUninit;

        // SAFETY: (test) zeroed bytes are what a C static holds; every
        // field of these types is an integer, a float or a byte array.
        let mut pi: EkcLoop = unsafe { MaybeUninit::zeroed().assume_init() };
        // SAFETY: (test) as above.
        let mut settings: EkcSettings = unsafe { MaybeUninit::zeroed().assume_init() };
        // SAFETY: (test) every pointer below is null, or points to a live
        // local of its type, or is the deliberately misaligned one (never
        // dereferenced: refused first).
        unsafe {
            let r = ekc_step(&mut pi, 0, 0);
            assert_eq!(result_code(r), EKC_ERR_UNCONFIGURED);
            assert_eq!((result_command(r), result_status(r)), (0, 0));
            assert_eq!(
                ekc_settings_init(&mut settings, 0.01, 0.5, 0.0, -1.0, 1.0),
                EKC_OK
            );
            assert_eq!(
                ekc_configure(core::ptr::null_mut(), &settings),
                EKC_ERR_NULL
            );
            assert_eq!(ekc_configure(&mut pi, &settings), EKC_OK);
            let r = ekc_step(&mut pi, 3, 0);
            assert_eq!(result_code(r), EKC_OK);
            assert_eq!((result_command(r), result_status(r)), (2, 0)); // 0.5 · 3 LSB = 1.5 → 2
            let r = ekc_step(&mut pi, -3, 0);
            assert_eq!((result_code(r), result_command(r)), (EKC_OK, -1)); // −1.5 → −1
            let extra = EkcExtra {
                feed_forward: 0,
                applied: 2,
                has_applied: 1,
            };
            let r = ekc_step_with(&mut pi, 3, 0, &extra);
            assert_eq!(result_code(r), EKC_OK);
            let mut value = 0;
            assert_eq!(ekc_last_command(&pi, &mut value), EKC_OK);
            assert_eq!(value, result_command(r));
            let r = ekc_track(&mut pi, 3, 0, &extra, 5);
            assert_eq!(result_code(r), EKC_OK);
            assert_ne!(result_status(r) & EKC_STATUS_TRACKING, 0);
            let misaligned = core::ptr::from_mut(&mut pi)
                .cast::<u8>()
                .wrapping_add(4)
                .cast::<EkcLoop>();
            assert_eq!(ekc_reset(misaligned), EKC_ERR_MISALIGNED);
            assert_eq!(result_code(ekc_step(misaligned, 0, 0)), EKC_ERR_MISALIGNED);
            assert_eq!(
                result_code(ekc_step(core::ptr::null_mut(), 0, 0)),
                EKC_ERR_NULL
            );
            assert_eq!(
                result_code(ekc_step_with(&mut pi, 3, 0, core::ptr::null())),
                EKC_ERR_NULL
            );
            let mut text = [0u8; 16];
            let n = ekc_code_text(EKC_ERR_NULL, text.as_mut_ptr().cast(), text.len());
            assert_eq!(&text[..15], &b"a pointer argument is null"[..15]);
            assert_eq!(text[15], 0);
            assert!(n > 16);
            // SAFETY: (test) as above.
            let mut slim: EkcSlimLoop = MaybeUninit::zeroed().assume_init();
            assert_eq!(ekc_slim_configure(&mut slim, &settings), EKC_OK);
            let r = ekc_slim_step(&mut slim, 3, 0);
            assert_eq!(result_code(r), EKC_OK);
            // 0.5 · 3 = 1.5 raw, clamped to output_max = 1 raw (unit scale).
            assert_eq!(result_command(r), 1);
            assert_ne!(result_status(r) & EKC_STATUS_CLAMP_HIGH, 0);
            let r = ekc_slim_step(&mut slim, -30, 0);
            // −15 raw, clamped to output_min = −1 raw: the sign survives the packing.
            assert_eq!((result_code(r), result_command(r)), (EKC_OK, -1));
        }
    }

    /// A step's arguments are checked in the documented order (extra, then
    /// storage; null before misaligned; then the tag), whatever else is
    /// wrong, and a refused step changes nothing.
    #[test]
    #[allow(clippy::multiple_unsafe_ops_per_block)] // one contract for the whole sequence of calls
    fn step_checks_give_the_ordered_codes() {
        use crate::codes::*;
        use crate::common_api::ekc_settings_init;
        use crate::fixed_api::{
            ekc_configure, ekc_last_command, ekc_step, ekc_step_with, ekc_track,
        };
        use crate::slim_api::{
            ekc_slim_configure, ekc_slim_last_command, ekc_slim_step, ekc_slim_step_with,
            ekc_slim_track,
        };
        use crate::types::{
            EkcExtra, EkcSettings, EkcSlimExtra, EkcStepResult, refused_result, result_code,
        };
        use core::mem::MaybeUninit;

        #[derive(Clone, Copy, Debug, PartialEq)]
        enum Arg {
            Null,
            Misaligned,
            Unconfigured,
            Fine,
        }
        use Arg::*;
        fn ptr<T>(p: *mut T, arg: Arg) -> *mut T {
            match arg {
                Null => core::ptr::null_mut(),
                Misaligned => p.cast::<u8>().wrapping_add(1).cast(),
                Unconfigured | Fine => p,
            }
        }
        fn code(arg: Arg) -> Option<EkcCode> {
            match arg {
                Null => Some(EKC_ERR_NULL),
                Misaligned => Some(EKC_ERR_MISALIGNED),
                Unconfigured => Some(EKC_ERR_UNCONFIGURED),
                Fine => None,
            }
        }
        // A refused step returns its code and nothing else.
        fn check(r: EkcStepResult, want: EkcCode, what: &str) {
            assert_eq!(result_code(r), want, "{what}");
            if want != EKC_OK {
                assert_eq!(r, refused_result(want), "{what}");
            }
        }
        let mut checked = 0;
        for storage_arg in [Null, Misaligned, Unconfigured, Fine] {
            for input_arg in [Null, Misaligned, Fine] {
                let want = code(input_arg).or(code(storage_arg)).unwrap_or(EKC_OK);
                let want_plain = code(storage_arg).unwrap_or(EKC_OK);
                let case = std::format!("{storage_arg:?} {input_arg:?}");
                // SAFETY: (test) zeroed bytes are what a C static holds.
                let mut pi: EkcLoop = unsafe { MaybeUninit::zeroed().assume_init() };
                // SAFETY: (test) as above.
                let mut slim: EkcSlimLoop = unsafe { MaybeUninit::zeroed().assume_init() };
                // SAFETY: (test) as above.
                let mut settings: EkcSettings = unsafe { MaybeUninit::zeroed().assume_init() };
                let mut extra = EkcExtra::default();
                let mut slim_extra = EkcSlimExtra::default();
                // SAFETY: (test) every pointer is null, a live local, or
                // the deliberately misaligned one (refused, never
                // dereferenced).
                unsafe {
                    ekc_settings_init(&mut settings, 0.01, 1.0, 0.0, -10.0, 10.0);
                    if storage_arg != Unconfigured {
                        assert_eq!(ekc_configure(&mut pi, &settings), EKC_OK);
                        assert_eq!(ekc_slim_configure(&mut slim, &settings), EKC_OK);
                    }
                    let p = ptr(&mut pi, storage_arg);
                    let x = ptr(&mut extra, input_arg);
                    check(ekc_step_with(p, 3 << 16, 0, x), want, &case);
                    check(ekc_track(p, 3 << 16, 0, x, 1 << 16), want, &case);
                    check(ekc_step(p, 3 << 16, 0), want_plain, &case);
                    let p = ptr(&mut slim, storage_arg);
                    let x = ptr(&mut slim_extra, input_arg);
                    check(ekc_slim_step_with(p, 3, 0, x), want, &case);
                    check(ekc_slim_track(p, 3, 0, x, 1), want, &case);
                    check(ekc_slim_step(p, 3, 0), want_plain, &case);
                    if storage_arg != Unconfigured {
                        // Kp · 3 = 3 once a step ran; 0 (at rest) if every call was refused.
                        let ran = want == EKC_OK || want_plain == EKC_OK;
                        let mut last = -1;
                        assert_eq!(ekc_last_command(&pi, &mut last), EKC_OK);
                        assert_eq!(last != 0, ran, "{case}");
                        let mut last = -1;
                        assert_eq!(ekc_slim_last_command(&slim, &mut last), EKC_OK);
                        assert_eq!(last != 0, ran, "{case}");
                    }
                }
                checked += 1;
            }
        }
        assert_eq!(checked, 12);
    }
}
