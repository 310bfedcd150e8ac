/*
 * evenkeel.h: the C interface of the evenkeel PI controller (crate evenkeel-c).
 * Generated from c/src by cbindgen; do not edit (see c/README.md).
 *
 * CAUTION: evenkeel is an engineering aid, not a certified safety function.
 * Functional-safety processes (e.g. ISO 26262, IEC 61508) and local
 * regulations govern any real deployment.
 *
 * Rules for the caller: one caller at a time per controller (an interrupt
 * and the main loop must not call functions on the same EkcLoop at once);
 * storage aligned as declared (EKC_LOOP_ALIGN, EKC_SLIM_LOOP_ALIGN; a
 * static or automatic EkcLoop is); storage is zeroed (a static is) or
 * configured before any other call. Every function checks its pointers and
 * returns an EkcCode (a step function returns it inside an EkcStepResult,
 * with the command and the status); none allocates, blocks or panics.
 */

#ifndef EVENKEEL_H
#define EVENKEEL_H

#include <stddef.h>
#include <stdint.h>
/**
 * EKC_ALIGNED(n): the alignment attribute of the storage types (GCC and
 * Clang syntax; define it before including this header for another
 * compiler).
 */
#ifndef EKC_ALIGNED
#define EKC_ALIGNED(n) __attribute__((aligned(n)))
#endif

/**
 * Bytes of an `EkcLoop`.
 */
#define EKC_LOOP_SIZE 152

/**
 * Alignment of an `EkcLoop` in bytes.
 */
#define EKC_LOOP_ALIGN 8

/**
 * Bytes of an `EkcSlimLoop`.
 */
#define EKC_SLIM_LOOP_SIZE 76

/**
 * Alignment of an `EkcSlimLoop` in bytes.
 */
#define EKC_SLIM_LOOP_ALIGN 4

/**
 * Q16.16 one: a signal of `EkcLoop` is `value · EKC_ONE` (`int32_t`).
 */
#define EKC_ONE (1 << 16)

/**
 * `EkcCoefficients.format` of the Q16.16 backend (`EkcLoop`).
 */
#define EKC_FORMAT_Q16_16 1

/**
 * `EkcCoefficients.format` of the 16-bit backend (`EkcSlimLoop`).
 */
#define EKC_FORMAT_SLIM16 2

/**
 * `EkcCoefficients.features`: measurement low-pass.
 */
#define EKC_FEATURE_FILTER (1 << 0)

/**
 * `EkcCoefficients.features`: error deadband.
 */
#define EKC_FEATURE_DEADBAND (1 << 1)

/**
 * `EkcCoefficients.features`: setpoint weight b ≠ 1.
 */
#define EKC_FEATURE_SETPOINT_WEIGHT (1 << 2)

/**
 * `EkcCoefficients.features`: slew limiter.
 */
#define EKC_FEATURE_SLEW (1 << 3)

/**
 * `EkcCoefficients.features`: back-calculation anti-windup (otherwise
 * conditional integration).
 */
#define EKC_FEATURE_BACK_CALCULATION (1 << 4)

/**
 * `EkcSettings.parts`: `slew_per_s` is given.
 */
#define EKC_PART_SLEW (1 << 0)

/**
 * `EkcSettings.parts`: `filter_time_s` is given.
 */
#define EKC_PART_FILTER (1 << 1)

/**
 * `EkcSettings.parts`: `deadband` is given.
 */
#define EKC_PART_DEADBAND (1 << 2)

/**
 * `EkcSettings.parts`: back-calculation with `tracking_time_s` (otherwise
 * conditional integration).
 */
#define EKC_PART_BACK_CALCULATION (1 << 3)

/**
 * Status bit: the command was clamped to `output_max`.
 */
#define EKC_STATUS_CLAMP_HIGH (1 << 0)

/**
 * Status bit: the command was clamped to `output_min`.
 */
#define EKC_STATUS_CLAMP_LOW (1 << 1)

/**
 * Status bit: the slew limiter shortened the command change.
 */
#define EKC_STATUS_SLEW (1 << 2)

/**
 * Status bit: the applied value differed from the last command.
 */
#define EKC_STATUS_DOWNSTREAM (1 << 3)

/**
 * Status bit: conditional integration held the integrator.
 */
#define EKC_STATUS_INTEGRATOR_HELD (1 << 4)

/**
 * Status bit: the error was inside the deadband.
 */
#define EKC_STATUS_DEADBAND (1 << 5)

/**
 * Status bit: the controller tracked an external actuator value.
 */
#define EKC_STATUS_TRACKING (1 << 6)

/**
 * Status bit: this step engaged the controller bumplessly.
 */
#define EKC_STATUS_ENGAGED (1 << 7)

/**
 * Status bit (fault): a non-finite input (float backends only; never set
 * here).
 */
#define EKC_STATUS_NON_FINITE (1 << 8)

/**
 * Status bit (fault): the measurement was outside its range and clamped.
 */
#define EKC_STATUS_MEASUREMENT_RANGE (1 << 9)

/**
 * Status bit (fault): the setpoint was outside the measurement range and
 * clamped.
 */
#define EKC_STATUS_SETPOINT_RANGE (1 << 10)

/**
 * Bit position of the status in an `EkcStepResult`.
 */
#define EKC_RESULT_STATUS_SHIFT 32

/**
 * Bit position of the code in an `EkcStepResult`.
 */
#define EKC_RESULT_CODE_SHIFT 48

/**
 * A result code: `EKC_OK`, an `EKC_ERR_…` call error, or a configuration
 * error `EKC_ERR_<kind> | EKC_SETTING_<setting>`.
 */
typedef int32_t EkcCode;

/**
 * Physical-unit settings (`ekc_settings_init` fills the defaults).
 * Converting them needs `double` arithmetic: on a core without FPU, load
 * precomputed `EkcCoefficients` instead.
 */
typedef struct EkcSettings {
  /**
   * Sample period Ts, seconds, > 0.
   */
  double period_s;
  /**
   * Proportional gain, ≥ 0.
   */
  double kp;
  /**
   * Integral gain, per second, ≥ 0 (not both zero with `kp`).
   */
  double ki_per_s;
  /**
   * Setpoint weight b of the proportional part, in [0, 1] (1: none).
   */
  double setpoint_weight;
  /**
   * Lowest command.
   */
  double output_min;
  /**
   * Highest command, above `output_min`.
   */
  double output_max;
  /**
   * Lowest plausible measurement (default −30 000).
   */
  double measurement_min;
  /**
   * Highest plausible measurement (default 30 000).
   */
  double measurement_max;
  /**
   * Which optional settings below are given: `EKC_PART_…` bits.
   */
  uint32_t parts;
  /**
   * Slew limit, command units per second, > 0 (`EKC_PART_SLEW`).
   */
  double slew_per_s;
  /**
   * Measurement filter time constant, seconds, > 0 (`EKC_PART_FILTER`).
   */
  double filter_time_s;
  /**
   * Error deadband half-width, ≥ 0 (`EKC_PART_DEADBAND`).
   */
  double deadband;
  /**
   * Back-calculation tracking time Tt, seconds, ≥ `period_s`
   * (`EKC_PART_BACK_CALCULATION`).
   */
  double tracking_time_s;
  /**
   * Raw measurement units per physical unit (default 1).
   */
  double measurement_per_unit;
  /**
   * Raw measurement value at physical zero (default 0).
   */
  double measurement_offset;
  /**
   * ADC resolution in bits of the raw measurement (0: not an ADC).
   */
  uint32_t measurement_bits;
  /**
   * Raw command units per physical unit (default 1).
   */
  double command_per_unit;
  /**
   * Raw command value at physical zero (default 0).
   */
  double command_offset;
  /**
   * Non-zero: the actuator takes whole counts (a PWM compare value).
   */
  uint32_t command_counts;
} EkcSettings;

/**
 * A stored coefficient: value = `mantissa · 2^-shift`.
 */
typedef struct EkcCoef {
  /**
   * The mantissa (16-bit format: within `int16_t`).
   */
  int32_t mantissa;
  /**
   * The binary point (Q16.16: 0 to 62; 16-bit format: 0 to 30).
   */
  uint8_t shift;
} EkcCoef;

/**
 * A configuration as precomputed integers: what `ekc_compute` gives and
 * `ekc_load` takes. `evenkeel design --c-out` and `evenkeel c-config`
 * write one as a `const` initialiser, so that a firmware configures with
 * no floating-point code. Signals are raw: Q16.16 bits for `EkcLoop`,
 * `int16_t` values for `EkcSlimLoop`. The coefficient and signal of a
 * feature that is off are ignored.
 */
typedef struct EkcCoefficients {
  /**
   * `EKC_FORMAT_Q16_16` or `EKC_FORMAT_SLIM16`: which loop type takes it.
   */
  uint32_t format;
  /**
   * `EKC_FEATURE_…` bits: the optional parts that are on.
   */
  uint32_t features;
  /**
   * Kp.
   */
  struct EkcCoef kp;
  /**
   * Setpoint weight b, in [0, 1] (`EKC_FEATURE_SETPOINT_WEIGHT`).
   */
  struct EkcCoef setpoint_weight;
  /**
   * Ki·Ts, per sample (shift ≥ 16; 16-bit format ≥ 15).
   */
  struct EkcCoef ki_ts;
  /**
   * Ts/Tt, in (0, 1] (`EKC_FEATURE_BACK_CALCULATION`; shift ≥ 16, or 14).
   */
  struct EkcCoef tracking_ratio;
  /**
   * Filter α = Ts/(Tf + Ts), in (0, 1] (`EKC_FEATURE_FILTER`; shift ≥
   * 16, or 15).
   */
  struct EkcCoef filter_alpha;
  /**
   * Largest command change per sample, > 0 (`EKC_FEATURE_SLEW`).
   */
  int32_t slew_step;
  /**
   * Deadband half-width, ≥ 0 (`EKC_FEATURE_DEADBAND`).
   */
  int32_t deadband;
  /**
   * Lowest command.
   */
  int32_t output_min;
  /**
   * Highest command, above `output_min`.
   */
  int32_t output_max;
  /**
   * Lowest plausible measurement.
   */
  int32_t measurement_min;
  /**
   * Highest plausible measurement, above `measurement_min`.
   */
  int32_t measurement_max;
  /**
   * Command at rest (after load and reset), within the output limits.
   */
  int32_t rest;
} EkcCoefficients;

/**
 * Storage for one Q16.16 controller (`int32_t` signals). Declare it where
 * it lives (a `static`, a struct member); it is configured by
 * `ekc_configure` or `ekc_load` and then used only through `ekc_…`
 * functions. Copying a configured one copies the controller.
 */
typedef struct EKC_ALIGNED(8) EkcLoop {
  /**
   * The controller's state: not to be read or written by C.
   */
  uint8_t opaque[EKC_LOOP_SIZE];
} EkcLoop;

/**
 * What a step returns (`ekc_step`, `ekc_step_with`, `ekc_track` and
 * their 16-bit twins): code, status and command packed in one 64-bit
 * integer, which the Arm calling convention returns in r0:r1 (no
 * out-pointer to check and write). Bits 0 to 31: the command, an
 * `int32_t` (an `EkcSlimLoop`'s `int16_t` command sign-extended); bits
 * 32 to 47: the `EKC_STATUS_…` bits; bits 48 to 63: the `EkcCode`
 * (every code fits 16 bits). A refused step has command and status 0.
 * Read it with `ekc_result_code`, `ekc_result_command` (or
 * `ekc_slim_result_command`) and `ekc_result_status`.
 */
typedef uint64_t EkcStepResult;

/**
 * The optional inputs of one `ekc_step_with` or `ekc_track` (Q16.16
 * bits); setpoint and measurement are arguments of their own.
 * `EKC_NO_EXTRA` is the one with none of them.
 */
typedef struct EkcExtra {
  /**
   * Feed-forward added before the limits (0 if unused).
   */
  int32_t feed_forward;
  /**
   * What the actuator applied of the previous command (read only when
   * `has_applied` is non-zero).
   */
  int32_t applied;
  /**
   * Non-zero: `applied` is known.
   */
  uint8_t has_applied;
} EkcExtra;

/**
 * Storage for one 16-bit controller (`int16_t` signals); see `EkcLoop`.
 */
typedef struct EKC_ALIGNED(4) EkcSlimLoop {
  /**
   * The controller's state: not to be read or written by C.
   */
  uint8_t opaque[EKC_SLIM_LOOP_SIZE];
} EkcSlimLoop;

/**
 * The optional inputs of one `ekc_slim_step_with` or `ekc_slim_track`
 * (raw 16-bit); see `EkcExtra`.
 */
typedef struct EkcSlimExtra {
  /**
   * Feed-forward added before the limits (0 if unused).
   */
  int16_t feed_forward;
  /**
   * What the actuator applied of the previous command (read only when
   * `has_applied` is non-zero).
   */
  int16_t applied;
  /**
   * Non-zero: `applied` is known.
   */
  uint8_t has_applied;
} EkcSlimExtra;

/**
 * Success.
 */
#define EKC_OK 0

/**
 * A pointer argument is null.
 */
#define EKC_ERR_NULL 1

/**
 * A pointer argument is not aligned for its type (`EKC_LOOP_ALIGN` for an
 * `EkcLoop`).
 */
#define EKC_ERR_MISALIGNED 2

/**
 * The controller storage was never configured (`ekc_configure` or
 * `ekc_load` did not succeed on it).
 */
#define EKC_ERR_UNCONFIGURED 3

/**
 * `EkcCoefficients` of the other format (Q16.16 given to a 16-bit loop, or
 * the reverse), or an unknown `format` value.
 */
#define EKC_ERR_FORMAT 4

/**
 * A configuration error this version of the interface has no code for
 * (the controller crate added one).
 */
#define EKC_ERR_CONFIG_OTHER 15

/**
 * Mask of a configuration error's kind.
 */
#define EKC_CODE_KIND_MASK 65280

/**
 * Mask of a configuration error's setting.
 */
#define EKC_CODE_SETTING_MASK 255

/**
 * A value is NaN or infinite.
 */
#define EKC_ERR_NOT_FINITE 256

/**
 * A value must be greater than zero.
 */
#define EKC_ERR_NOT_POSITIVE 512

/**
 * A value must be zero or positive.
 */
#define EKC_ERR_NEGATIVE 768

/**
 * The upper end of a range is not above the lower end.
 */
#define EKC_ERR_INVERTED 1024

/**
 * A value does not fit the number format.
 */
#define EKC_ERR_OUT_OF_FORMAT 1280

/**
 * A value would be stored with more relative error than promised.
 */
#define EKC_ERR_TOO_FINE 1536

/**
 * The setting does not fit a compile-time layout.
 */
#define EKC_ERR_LAYOUT 1792

/**
 * Both Kp and Ki are zero.
 */
#define EKC_ERR_NO_ACTION 2048

/**
 * The setpoint weight is outside [0, 1].
 */
#define EKC_ERR_SETPOINT_WEIGHT_RANGE 2304

/**
 * Ts/Tt is outside (0, 1].
 */
#define EKC_ERR_TRACKING_RATIO_RANGE 2560

/**
 * Gain-schedule breakpoints are invalid.
 */
#define EKC_ERR_SCHEDULE 2816

/**
 * A setpoint weight below 1 with a measurement offset.
 */
#define EKC_ERR_WEIGHTED_OFFSET 3072

/**
 * `period_s`.
 */
#define EKC_SETTING_PERIOD 1

/**
 * `kp`.
 */
#define EKC_SETTING_KP 2

/**
 * `ki_per_s`.
 */
#define EKC_SETTING_KI 3

/**
 * `setpoint_weight`.
 */
#define EKC_SETTING_SETPOINT_WEIGHT 4

/**
 * `output_min`.
 */
#define EKC_SETTING_OUTPUT_MIN 5

/**
 * `output_max`.
 */
#define EKC_SETTING_OUTPUT_MAX 6

/**
 * `slew_per_s`.
 */
#define EKC_SETTING_SLEW 7

/**
 * `filter_time_s`.
 */
#define EKC_SETTING_FILTER_TIME 8

/**
 * `deadband`.
 */
#define EKC_SETTING_DEADBAND 9

/**
 * `tracking_time_s`.
 */
#define EKC_SETTING_TRACKING_TIME 10

/**
 * `measurement_min`.
 */
#define EKC_SETTING_MEASUREMENT_MIN 11

/**
 * `measurement_max`.
 */
#define EKC_SETTING_MEASUREMENT_MAX 12

/**
 * A gain-schedule breakpoint.
 */
#define EKC_SETTING_BREAKPOINT 13

/**
 * The set of optional parts (`EkcCoefficients.features`).
 */
#define EKC_SETTING_FEATURES 14

/**
 * The measurement scale.
 */
#define EKC_SETTING_MEASUREMENT_SCALE 15

/**
 * The command scale (and the command at rest of `EkcCoefficients`).
 */
#define EKC_SETTING_COMMAND_SCALE 16

/**
 * No optional inputs: what `ekc_step` passes to `ekc_step_with`.
 */
#define EKC_NO_EXTRA (EkcExtra){ .feed_forward = 0, .applied = 0, .has_applied = 0 }

/**
 * No optional inputs: what `ekc_slim_step` passes to `ekc_slim_step_with`.
 */
#define EKC_SLIM_NO_EXTRA (EkcSlimExtra){ .feed_forward = 0, .applied = 0, .has_applied = 0 }

#ifdef __cplusplus
extern "C" {
#endif // __cplusplus

/**
 * Fill `*out` with the required settings and a default for every other
 * one: setpoint weight 1, no slew limit, filter or deadband, conditional
 * integration, measurement range ±30 000, raw units = physical units.
 * Nothing is checked here (`ekc_configure` checks).
 *
 * # Safety
 * `out` is null (refused with `EKC_ERR_NULL`) or points to an
 * `EkcSettings` that no other call uses at the same time.
 */
EkcCode ekc_settings_init(struct EkcSettings *out, double period_s, double kp, double ki_per_s, double output_min, double output_max);

/**
 * Write what `code` means (for a configuration error, the setting and
 * the rule it breaks) into `buffer`, at most `capacity` bytes including
 * the terminating NUL, and return the length of the whole text (without
 * NUL), as `snprintf` does: a return value ≥ `capacity` means it was cut.
 * A null `buffer` or zero `capacity` only measures. Unknown codes have a
 * text too. (Links `core::fmt`: on a small target, print the code instead.)
 *
 * # Safety
 * `buffer` is null or points to `capacity` writable bytes that no other
 * call uses at the same time.
 */
size_t ekc_code_text(EkcCode code, char *buffer, size_t capacity);

/**
 * Compute the Q16.16 coefficients of `settings` into `*out` (`double`
 * arithmetic: a host tool, or a core with a double-precision FPU). On
 * error `*out` is unchanged and the code names the setting.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_compute(const struct EkcSettings *settings, struct EkcCoefficients *out);

/**
 * Configure `*pi` from physical settings (as `ekc_compute` then
 * `ekc_load`): a controller at rest. On error `*pi` is unchanged.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_configure(struct EkcLoop *pi, const struct EkcSettings *settings);

/**
 * Configure `*pi` from precomputed coefficients (format
 * `EKC_FORMAT_Q16_16`), checked with integer comparisons only: no
 * floating point. A controller at rest. On error `*pi` is unchanged.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_load(struct EkcLoop *pi, const struct EkcCoefficients *coefficients);

/**
 * One control step with setpoint and measurement (Q16.16 bits (value · EKC_ONE)) alone:
 * `ekc_step_with` with `EKC_NO_EXTRA` (no feed-forward, no applied value).
 * Returns code, command and status in one `EkcStepResult`; on
 * error (in this order: `pi` null `EKC_ERR_NULL`, misaligned
 * `EKC_ERR_MISALIGNED`, never configured `EKC_ERR_UNCONFIGURED`) nothing
 * changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_step(struct EkcLoop *pi, int32_t setpoint, int32_t measurement);

/**
 * One control step with setpoint, measurement and the optional inputs
 * in `*extra`: feed-forward and, if known, the value the actuator applied
 * of the previous command. Returns code, command and status in one
 * `EkcStepResult`. The checks, in this order (the first that fails
 * gives the code, and nothing changes): `extra` null (`EKC_ERR_NULL`) or
 * misaligned (`EKC_ERR_MISALIGNED`), `pi` null or misaligned, `pi` never
 * configured (`EKC_ERR_UNCONFIGURED`).
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_step_with(struct EkcLoop *pi, int32_t setpoint, int32_t measurement, const struct EkcExtra *extra);

/**
 * Take over bumplessly from `actuator` (the value another source drives):
 * the next step's command continues from it.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_engage(struct EkcLoop *pi, int32_t actuator);

/**
 * One step while another source drives the actuator at `actuator`: the
 * command follows it (clamped) and the integrator stays aligned, so a later
 * step continues without a bump. The result as of the step function
 * (with `EKC_STATUS_TRACKING` set), its checks in the same order; a
 * refused call does not engage.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_track(struct EkcLoop *pi, int32_t setpoint, int32_t measurement, const struct EkcExtra *extra, int32_t actuator);

/**
 * Replace the configuration bumplessly (the integrator absorbs the
 * change of the proportional part). On error nothing changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_retune(struct EkcLoop *pi, const struct EkcCoefficients *coefficients);

/**
 * Replace Kp and Ki·Ts (per sample) bumplessly, keeping everything else,
 * checked as a configuration checks them. On error nothing changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_retune_gains(struct EkcLoop *pi, struct EkcCoef kp, struct EkcCoef ki_ts);

/**
 * Back to rest (integrator zero, command at rest), keeping the
 * configuration.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_reset(struct EkcLoop *pi);

/**
 * The integral term I, rounded to a signal, into `*out`.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_integral(const struct EkcLoop *pi, int32_t *out);

/**
 * The last command returned, into `*out`.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_last_command(const struct EkcLoop *pi, int32_t *out);

/**
 * Compute the 16-bit coefficients of `settings` into `*out` (`double`
 * arithmetic: a host tool, or a core with a double-precision FPU). On
 * error `*out` is unchanged and the code names the setting.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_compute(const struct EkcSettings *settings, struct EkcCoefficients *out);

/**
 * Configure `*pi` from physical settings (as `ekc_slim_compute` then
 * `ekc_slim_load`): a controller at rest. On error `*pi` is unchanged.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_configure(struct EkcSlimLoop *pi, const struct EkcSettings *settings);

/**
 * Configure `*pi` from precomputed coefficients (format
 * `EKC_FORMAT_SLIM16`), checked with integer comparisons only: no
 * floating point. A controller at rest. On error `*pi` is unchanged.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_load(struct EkcSlimLoop *pi, const struct EkcCoefficients *coefficients);

/**
 * One control step with setpoint and measurement (raw 16-bit values in the loop's scaling) alone:
 * `ekc_slim_step_with` with `EKC_SLIM_NO_EXTRA` (no feed-forward, no applied value).
 * Returns code, command and status in one `EkcStepResult` (command: `ekc_slim_result_command`); on
 * error (in this order: `pi` null `EKC_ERR_NULL`, misaligned
 * `EKC_ERR_MISALIGNED`, never configured `EKC_ERR_UNCONFIGURED`) nothing
 * changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_slim_step(struct EkcSlimLoop *pi, int16_t setpoint, int16_t measurement);

/**
 * One control step with setpoint, measurement and the optional inputs
 * in `*extra`: feed-forward and, if known, the value the actuator applied
 * of the previous command. Returns code, command and status in one
 * `EkcStepResult` (command: `ekc_slim_result_command`). The checks, in this order (the first that fails
 * gives the code, and nothing changes): `extra` null (`EKC_ERR_NULL`) or
 * misaligned (`EKC_ERR_MISALIGNED`), `pi` null or misaligned, `pi` never
 * configured (`EKC_ERR_UNCONFIGURED`).
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_slim_step_with(struct EkcSlimLoop *pi, int16_t setpoint, int16_t measurement, const struct EkcSlimExtra *extra);

/**
 * Take over bumplessly from `actuator` (the value another source drives):
 * the next step's command continues from it.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_engage(struct EkcSlimLoop *pi, int16_t actuator);

/**
 * One step while another source drives the actuator at `actuator`: the
 * command follows it (clamped) and the integrator stays aligned, so a later
 * step continues without a bump. The result as of the step function
 * (with `EKC_STATUS_TRACKING` set), its checks in the same order; a
 * refused call does not engage.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcStepResult ekc_slim_track(struct EkcSlimLoop *pi, int16_t setpoint, int16_t measurement, const struct EkcSlimExtra *extra, int16_t actuator);

/**
 * Replace the configuration bumplessly (the integrator absorbs the
 * change of the proportional part). On error nothing changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_retune(struct EkcSlimLoop *pi, const struct EkcCoefficients *coefficients);

/**
 * Replace Kp and Ki·Ts (per sample) bumplessly, keeping everything else,
 * checked as a configuration checks them. On error nothing changes.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_retune_gains(struct EkcSlimLoop *pi, struct EkcCoef kp, struct EkcCoef ki_ts);

/**
 * Back to rest (integrator zero, command at rest), keeping the
 * configuration.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_reset(struct EkcSlimLoop *pi);

/**
 * The integral term I, rounded to a signal, into `*out`.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_integral(const struct EkcSlimLoop *pi, int16_t *out);

/**
 * The last command returned, into `*out`.
 *
 * # Safety
 * Every pointer is null (refused with `EKC_ERR_NULL`) or points to a whole
 * object of its type that no other call uses at the same time, the objects
 * of one call do not overlap, and loop storage was zeroed or configured
 * before (never left uninitialised).
 */
EkcCode ekc_slim_last_command(const struct EkcSlimLoop *pi, int16_t *out);

#ifdef __cplusplus
}  // extern "C"
#endif  // __cplusplus

#endif  /* EVENKEEL_H */

#ifndef EVENKEEL_H_RESULT
#define EVENKEEL_H_RESULT

/**
 * The code of a step result: EKC_OK, or why the step was refused.
 */
static inline EkcCode ekc_result_code(EkcStepResult result) {
  return (EkcCode)(result >> EKC_RESULT_CODE_SHIFT);
}

/**
 * The command of an EkcLoop's step result (Q16.16 bits; 0 if refused).
 * Bits 0 to 31 as an int32_t, written without a conversion that C leaves
 * to the implementation (compilers make it a plain register move).
 */
static inline int32_t ekc_result_command(EkcStepResult result) {
  uint32_t bits = (uint32_t)result;
  return bits <= (uint32_t)INT32_MAX ? (int32_t)bits
                                     : (int32_t)(bits - 0x80000000u) - INT32_MAX - 1;
}

/**
 * The command of an EkcSlimLoop's step result (raw int16_t; 0 if refused).
 */
static inline int16_t ekc_slim_result_command(EkcStepResult result) {
  return (int16_t)ekc_result_command(result);
}

/**
 * The status bits of a step result (EKC_STATUS_…; 0 if refused).
 */
static inline uint16_t ekc_result_status(EkcStepResult result) {
  return (uint16_t)(result >> EKC_RESULT_STATUS_SHIFT);
}

#endif  /* EVENKEEL_H_RESULT */
