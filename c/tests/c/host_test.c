/*
 * Host test of the C interface: compiled by gcc against the host static
 * library and run by `cargo test -p evenkeel-c --test host_c`. Exits 0 only
 * if every check passed; prints each failure.
 *
 * Every expected value below is worked by hand in the comment beside it
 * from the numeric contract in controller/FORMATS.md (Q16.16 signals,
 * products rounded to nearest with ties toward +infinity, the output clamp
 * and slew limit as documented), not taken from a run.
 */
#include <math.h>
#include <stdalign.h>
#include <stdio.h>
#include <string.h>

#include "evenkeel.h"

static int failures;

#define CHECK(cond)                                                      \
    do {                                                                 \
        if (!(cond)) {                                                   \
            printf("FAIL %s:%d: %s\n", __FILE__, __LINE__, #cond);       \
            failures++;                                                  \
        }                                                                \
    } while (0)

#define CHECK_EQ(got, want)                                              \
    do {                                                                 \
        long long g_ = (long long)(got), w_ = (long long)(want);         \
        if (g_ != w_) {                                                  \
            printf("FAIL %s:%d: %s = %lld (0x%llx), want %lld (0x%llx)\n", \
                   __FILE__, __LINE__, #got, g_, g_, w_, w_);            \
            failures++;                                                  \
        }                                                                \
    } while (0)

/* A step result, unpacked with the header's readers. */
typedef struct Out {
    EkcCode code;
    int32_t command;
    uint16_t status;
} Out;

static Out unpack(EkcStepResult r) {
    Out o = { ekc_result_code(r), ekc_result_command(r), ekc_result_status(r) };
    return o;
}

static Out unpack_slim(EkcStepResult r) {
    Out o = { ekc_result_code(r), ekc_slim_result_command(r), ekc_result_status(r) };
    return o;
}

/* Zeroed storage, as a firmware's statics are. */
static EkcLoop pi;
static EkcLoop never_configured;
static EkcSlimLoop slim;

static EkcSettings settings(double ts, double kp, double ki, double lo, double hi) {
    EkcSettings s;
    CHECK_EQ(ekc_settings_init(&s, ts, kp, ki, lo, hi), EKC_OK);
    return s;
}

static void published_layout(void) {
    CHECK_EQ(sizeof(EkcLoop), EKC_LOOP_SIZE);
    CHECK_EQ(alignof(EkcLoop), EKC_LOOP_ALIGN);
    CHECK_EQ(sizeof(EkcSlimLoop), EKC_SLIM_LOOP_SIZE);
    CHECK_EQ(alignof(EkcSlimLoop), EKC_SLIM_LOOP_ALIGN);
    CHECK_EQ(EKC_ONE, 65536);
}

/* Kp = 0.5, no integral action. Kp·e for e = ±3 LSB is ±1.5 LSB, rounded
 * to nearest with ties toward +infinity: +2 and -1. No limit acts and
 * nothing holds the integrator: status 0. */
static void proportional_rounding(void) {
    EkcSettings s = settings(0.01, 0.5, 0.0, -1.0, 1.0);
    Out out;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    out = unpack(ekc_step(&pi, 3, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 2);
    CHECK_EQ(out.status, 0);
    out = unpack(ekc_step(&pi, -3, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, -1);
}

/* Kp = 0, Ki = 1 /s, Ts = 0.01 s: Ki·Ts = 0.01 per sample. With e = 1.0
 * the command is the integral before the update: 0, then 0.01·2^16 =
 * 655.36 -> 655 LSB, then 0.02·2^16 = 1310.72 -> 1311 LSB (the integrator
 * keeps Q32.32, so the second step adds to 0.01, not to 655 LSB). */
static void integral_steps(void) {
    EkcSettings s = settings(0.01, 0.0, 1.0, -1.0, 1.0);
    Out out;
    int32_t value = -1;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    out = unpack(ekc_step(&pi, EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 0);
    CHECK_EQ(ekc_integral(&pi, &value), EKC_OK);
    CHECK_EQ(value, 655);
    out = unpack(ekc_step(&pi, EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 655);
    out = unpack(ekc_step(&pi, EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 1311);
    CHECK_EQ(ekc_last_command(&pi, &value), EKC_OK);
    CHECK_EQ(value, 1311);
    /* Reset: integrator zero, command at rest (0 lies inside [-1, 1]). */
    CHECK_EQ(ekc_reset(&pi), EKC_OK);
    CHECK_EQ(ekc_integral(&pi, &value), EKC_OK);
    CHECK_EQ(value, 0);
    CHECK_EQ(ekc_last_command(&pi, &value), EKC_OK);
    CHECK_EQ(value, 0);
}

/* Kp = 2, limits [0, 4]: r = 10, y = 0 gives P = 20, clamped to 4.0 =
 * 262144 LSB; the clamp holds the integrator (error positive, command cut
 * from above). */
static void clamp_high(void) {
    EkcSettings s = settings(0.1, 2.0, 1.0, 0.0, 4.0);
    Out out;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    out = unpack(ekc_step(&pi, 10 * EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 4 * EKC_ONE);
    CHECK_EQ(out.status, EKC_STATUS_CLAMP_HIGH | EKC_STATUS_INTEGRATOR_HELD);
}

/* Slew 1 /s at Ts = 0.1 s: 0.1 per sample = 6553.6 -> 6554 LSB (nearest).
 * Kp = 1, r = 5: P = 5, from rest at 0 the command moves 6554 LSB, then
 * 13108. The limiter cut the command below v = P + I with a positive
 * error, so conditional integration holds the integrator too. */
static void slew_limit(void) {
    EkcSettings s = settings(0.1, 1.0, 0.0, -10.0, 10.0);
    Out out;
    s.parts |= EKC_PART_SLEW;
    s.slew_per_s = 1.0;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    out = unpack(ekc_step(&pi, 5 * EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 6554);
    CHECK_EQ(out.status, EKC_STATUS_SLEW | EKC_STATUS_INTEGRATOR_HELD);
    out = unpack(ekc_step(&pi, 5 * EKC_ONE, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 13108);
}

/* Engage at 6.5 (425984 LSB): the next command is 6.5 exactly, flagged
 * ENGAGED; tracking returns the actuator value, flagged TRACKING. */
static void engage_and_track(void) {
    EkcSettings s = settings(0.1, 1.0, 1.0, 0.0, 10.0);
    Out out;
    EkcExtra none = EKC_NO_EXTRA;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    CHECK_EQ(ekc_engage(&pi, 425984), EKC_OK);
    out = unpack(ekc_step(&pi, 3 * EKC_ONE, 2 * EKC_ONE));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 425984);
    CHECK_EQ(out.status, EKC_STATUS_ENGAGED);
    out = unpack(ekc_track(&pi, 3 * EKC_ONE, 2 * EKC_ONE, &none, 2 * EKC_ONE));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 2 * EKC_ONE);
    CHECK(out.status & EKC_STATUS_TRACKING);
}

/* Measurement range [0, 500]: y = 600 is clamped to 500 and flagged. With
 * Kp = 1, r = 501 (clamped too) and y = 500: P = 0, command 0. Feed-forward
 * 0.25 (16384 LSB) through ekc_step_with is added: command 16384. */
static void range_and_feed_forward(void) {
    EkcSettings s = settings(0.1, 1.0, 0.0, -1.0, 1.0);
    Out out;
    EkcExtra extra = { 16384, 0, 0 };
    s.measurement_min = 0.0;
    s.measurement_max = 500.0;
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    out = unpack(ekc_step_with(&pi, 501 * EKC_ONE, 600 * EKC_ONE, &extra));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 16384);
    CHECK_EQ(out.status, EKC_STATUS_MEASUREMENT_RANGE | EKC_STATUS_SETPOINT_RANGE);
}

/* Precomputed coefficients: ekc_compute then ekc_load gives the same
 * controller as ekc_configure; Kp = 2 is stored as 2^30 · 2^-29. A retune
 * to Kp = 1 (2^30 · 2^-30) takes effect bumplessly. */
static void coefficients_path(void) {
    EkcSettings s = settings(0.01, 2.0, 5.0, -10.0, 10.0);
    EkcCoefficients c;
    Out a, b;
    EkcCoef kp1 = { 1 << 30, 30 };
    CHECK_EQ(ekc_compute(&s, &c), EKC_OK);
    CHECK_EQ(c.format, EKC_FORMAT_Q16_16);
    CHECK_EQ(c.kp.mantissa, 1 << 30);
    CHECK_EQ(c.kp.shift, 29);
    CHECK_EQ(c.output_max, 10 * EKC_ONE);
    CHECK_EQ(ekc_load(&pi, &c), EKC_OK);
    a = unpack(ekc_step(&pi, EKC_ONE, 0));
    CHECK_EQ(a.code, EKC_OK);
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    b = unpack(ekc_step(&pi, EKC_ONE, 0));
    CHECK_EQ(b.code, EKC_OK);
    CHECK_EQ(a.command, b.command);
    CHECK_EQ(a.command, 2 * EKC_ONE); /* P = 2 · 1, I = 0 before the update */
    CHECK_EQ(ekc_retune_gains(&pi, kp1, c.ki_ts), EKC_OK);
    CHECK_EQ(ekc_retune(&pi, &c), EKC_OK);
    /* Bad parts: an unknown feature bit, Ki·Ts at shift 15 (below 16). */
    c.features |= 1u << 5;
    CHECK_EQ(ekc_load(&pi, &c), EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_FEATURES);
    c.features &= ~(1u << 5);
    c.ki_ts.shift = 15;
    CHECK_EQ(ekc_load(&pi, &c), EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_KI);
    CHECK_EQ(ekc_retune_gains(&pi, kp1, c.ki_ts), EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_KI);
    c.ki_ts.shift = 35;
    c.format = EKC_FORMAT_SLIM16;
    CHECK_EQ(ekc_load(&pi, &c), EKC_ERR_FORMAT);
}

/* The 16-bit loop, 512 raw units per unit on both sides: Kp = 0.5 and a
 * raw error of 3 give 1.5 raw -> 2 (ties toward +infinity). */
static void slim_loop(void) {
    EkcSettings s = settings(0.01, 0.5, 0.0, -10.0, 10.0);
    Out out;
    EkcCoefficients c;
    int16_t value = -1;
    s.measurement_min = -60.0;
    s.measurement_max = 60.0;
    s.measurement_per_unit = 512.0;
    s.command_per_unit = 512.0;
    out = unpack_slim(ekc_slim_step(&slim, 3, 0));
    CHECK_EQ(out.code, EKC_ERR_UNCONFIGURED);
    CHECK_EQ(ekc_slim_configure(&slim, &s), EKC_OK);
    out = unpack_slim(ekc_slim_step(&slim, 3, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, 2);
    /* -3 raw: -1.5 -> -1, through the packed result's sign extension. */
    out = unpack_slim(ekc_slim_step(&slim, -3, 0));
    CHECK_EQ(out.code, EKC_OK);
    CHECK_EQ(out.command, -1);
    out = unpack_slim(ekc_slim_step(&slim, 3, 0));
    CHECK_EQ(out.command, 2);
    CHECK_EQ(ekc_slim_last_command(&slim, &value), EKC_OK);
    CHECK_EQ(value, 2);
    CHECK_EQ(ekc_slim_compute(&s, &c), EKC_OK);
    CHECK_EQ(c.format, EKC_FORMAT_SLIM16);
    CHECK_EQ(c.output_max, 5120); /* 10 · 512 */
    CHECK_EQ(ekc_load(&pi, &c), EKC_ERR_FORMAT);
    CHECK_EQ(ekc_slim_load(&slim, &c), EKC_OK);
    /* 64 units are 64 · 512 = 32768 raw: one above int16_t. */
    s.output_max = 64.0;
    CHECK_EQ(ekc_slim_configure(&slim, &s), EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_OUTPUT_MAX);
}

/* Every call error. */
static void call_errors(void) {
    EkcSettings s = settings(0.01, 1.0, 1.0, -1.0, 1.0);
    Out out;
    EkcExtra extra = { 0, 0, 0 };
    int32_t value;
    alignas(8) unsigned char raw[sizeof(EkcLoop) + 8];
    EkcLoop *misaligned = (EkcLoop *)(raw + 4);
    CHECK_EQ(ekc_configure(NULL, &s), EKC_ERR_NULL);
    CHECK_EQ(ekc_configure(&pi, NULL), EKC_ERR_NULL);
    CHECK_EQ(ekc_configure(misaligned, &s), EKC_ERR_MISALIGNED);
    out = unpack(ekc_step(&never_configured, 0, 0));
    CHECK_EQ(out.code, EKC_ERR_UNCONFIGURED);
    CHECK_EQ(out.command, 0);
    CHECK_EQ(out.status, 0);
    CHECK_EQ(ekc_result_code(ekc_step_with(&never_configured, 0, 0, &extra)), EKC_ERR_UNCONFIGURED);
    CHECK_EQ(ekc_engage(&never_configured, 0), EKC_ERR_UNCONFIGURED);
    CHECK_EQ(ekc_reset(&never_configured), EKC_ERR_UNCONFIGURED);
    CHECK_EQ(ekc_integral(&never_configured, &value), EKC_ERR_UNCONFIGURED);
    CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
    CHECK_EQ(ekc_result_code(ekc_step(NULL, 0, 0)), EKC_ERR_NULL);
    CHECK_EQ(ekc_result_code(ekc_step(misaligned, 0, 0)), EKC_ERR_MISALIGNED);
    CHECK_EQ(ekc_result_code(ekc_step_with(misaligned, 0, 0, &extra)), EKC_ERR_MISALIGNED);
    CHECK_EQ(ekc_result_code(ekc_step_with(NULL, 0, 0, (const EkcExtra *)(raw + 2))), EKC_ERR_MISALIGNED);
    CHECK_EQ(ekc_result_code(ekc_track(&pi, 0, 0, NULL, 0)), EKC_ERR_NULL);
    CHECK_EQ(ekc_result_code(ekc_step_with(&pi, 0, 0, NULL)), EKC_ERR_NULL);
    CHECK_EQ(ekc_step_with(NULL, 0, 0, NULL), ekc_step_with(&pi, 0, 0, NULL)); /* code alone, command and status 0 */
    CHECK_EQ(ekc_last_command(&pi, NULL), EKC_ERR_NULL);
    CHECK_EQ(ekc_settings_init(NULL, 1, 1, 1, 0, 1), EKC_ERR_NULL);
    CHECK_EQ(ekc_compute(&s, NULL), EKC_ERR_NULL);
}

/* Every configuration error a C caller can reach from settings, one per
 * kind, each naming its setting. */
static void config_errors(void) {
    EkcSettings s;
    int32_t code;
#define REFUSED(edit, want)                                               \
    do {                                                                  \
        s = settings(0.01, 1.0, 1.0, -1.0, 1.0);                          \
        edit;                                                             \
        CHECK_EQ(ekc_configure(&pi, &s), want);                           \
    } while (0)
    REFUSED(s.period_s = 0.0, EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD);
    REFUSED(s.kp = NAN, EKC_ERR_NOT_FINITE | EKC_SETTING_KP);
    REFUSED(s.ki_per_s = -1.0, EKC_ERR_NEGATIVE | EKC_SETTING_KI);
    REFUSED(s.output_max = -1.0, EKC_ERR_INVERTED | EKC_SETTING_OUTPUT_MAX);
    REFUSED(s.output_max = 40000.0, EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_OUTPUT_MAX);
    REFUSED((s.period_s = 0.001, s.parts = EKC_PART_SLEW, s.slew_per_s = 0.02),
            EKC_ERR_TOO_FINE | EKC_SETTING_SLEW);
    REFUSED((s.kp = 0.0, s.ki_per_s = 0.0), EKC_ERR_NO_ACTION);
    REFUSED(s.setpoint_weight = 1.5, EKC_ERR_SETPOINT_WEIGHT_RANGE);
    REFUSED((s.parts = EKC_PART_BACK_CALCULATION, s.tracking_time_s = 0.001),
            EKC_ERR_TRACKING_RATIO_RANGE);
    REFUSED((s.setpoint_weight = 0.5, s.measurement_offset = 100.0), EKC_ERR_WEIGHTED_OFFSET);
    REFUSED((s.parts = EKC_PART_FILTER, s.filter_time_s = -1.0),
            EKC_ERR_NOT_POSITIVE | EKC_SETTING_FILTER_TIME);
    REFUSED((s.parts = EKC_PART_DEADBAND, s.deadband = -0.5),
            EKC_ERR_NEGATIVE | EKC_SETTING_DEADBAND);
#undef REFUSED
    /* A refused configuration leaves the loop as it was: still the last
     * good one (Kp = 1, limits +-1). */
    {
        Out out;
        s = settings(0.01, 1.0, 0.0, -1.0, 1.0);
        CHECK_EQ(ekc_configure(&pi, &s), EKC_OK);
        s.period_s = -1.0;
        CHECK_EQ(ekc_configure(&pi, &s), EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD);
        out = unpack(ekc_step(&pi, EKC_ONE / 2, 0));
    CHECK_EQ(out.code, EKC_OK);
        CHECK_EQ(out.command, EKC_ONE / 2);
    }
    /* The codes' layout: kind | setting. */
    code = EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD;
    CHECK_EQ(code & EKC_CODE_KIND_MASK, EKC_ERR_NOT_POSITIVE);
    CHECK_EQ(code & EKC_CODE_SETTING_MASK, EKC_SETTING_PERIOD);
}

/* Texts: a configuration error says its setting and rule; every code of
 * the header has a text of its own; a short buffer is cut and
 * NUL-terminated, and the full length is returned. */
static void texts(void) {
    static const EkcCode codes[] = {
        EKC_OK, EKC_ERR_NULL, EKC_ERR_MISALIGNED, EKC_ERR_UNCONFIGURED, EKC_ERR_FORMAT,
        EKC_ERR_CONFIG_OTHER, EKC_ERR_NOT_FINITE | EKC_SETTING_KP,
        EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD, EKC_ERR_NEGATIVE | EKC_SETTING_KI,
        EKC_ERR_INVERTED | EKC_SETTING_OUTPUT_MAX, EKC_ERR_OUT_OF_FORMAT | EKC_SETTING_OUTPUT_MAX,
        EKC_ERR_TOO_FINE | EKC_SETTING_SLEW, EKC_ERR_LAYOUT | EKC_SETTING_FEATURES,
        EKC_ERR_NO_ACTION, EKC_ERR_SETPOINT_WEIGHT_RANGE, EKC_ERR_TRACKING_RATIO_RANGE,
        EKC_ERR_SCHEDULE, EKC_ERR_WEIGHTED_OFFSET,
    };
    char text[sizeof codes / sizeof codes[0]][256];
    char small[8];
    size_t n, i, j;
    for (i = 0; i < sizeof codes / sizeof codes[0]; i++) {
        n = ekc_code_text(codes[i], text[i], sizeof text[i]);
        CHECK(n > 0 && n < sizeof text[i]);
        CHECK_EQ(strlen(text[i]), n);
        CHECK(strcmp(text[i], "not an evenkeel code") != 0);
        for (j = 0; j < i; j++) {
            CHECK(strcmp(text[i], text[j]) != 0);
        }
    }
    n = ekc_code_text(EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD, text[0], sizeof text[0]);
    CHECK(strcmp(text[0], "period_s must be greater than zero") == 0);
    CHECK_EQ(ekc_code_text(EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD, small, sizeof small), n);
    CHECK(strcmp(small, "period_") == 0);
    CHECK_EQ(ekc_code_text(EKC_ERR_NOT_POSITIVE | EKC_SETTING_PERIOD, NULL, 0), n);
    ekc_code_text(12345, text[0], sizeof text[0]);
    CHECK(strcmp(text[0], "not an evenkeel code") == 0);
}

int main(void) {
    published_layout();
    proportional_rounding();
    integral_steps();
    clamp_high();
    slew_limit();
    engage_and_track();
    range_and_feed_forward();
    coefficients_path();
    slim_loop();
    call_errors();
    config_errors();
    texts();
    if (failures != 0) {
        printf("host C test: %d check(s) failed\n", failures);
        return 1;
    }
    printf("host C test: all checks passed\n");
    return 0;
}
