/*
 * The C firmware: replays the golden vectors (shared/vectors/golden.ekv
 * through the Q16.16 loop, shared/vectors/slim16.ekv through the 16-bit
 * loop; format in shared/vectors/FORMAT.md) through the C interface of the
 * evenkeel static library, compares every command and status bit, times
 * ekc_step_with / ekc_step on the workloads of boards/replay/src/cost.rs,
 * prints the results over semihosting and exits with the verdict.
 *
 * Every configuration comes from tables.h as precomputed EkcCoefficients
 * (ekc_load): the firmware contains no floating-point code.
 *
 * Build: boards/c-replay/build (boards/run calls it).
 */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "evenkeel.h"
#include "tables.h"

#ifndef BOARD_NAME
#error "BOARD_NAME, RATE_TICKS and RATE_INSTRUCTIONS come from the build"
#endif

/* ---- reading the vector file (a port of boards/replay/src/format.rs) ---- */

typedef struct Cursor {
    const unsigned char *at;
    const unsigned char *end;
    int bad; /* set once anything could not be read */
} Cursor;

static uint32_t take_le(Cursor *c, unsigned n) {
    uint32_t v = 0;
    unsigned i;
    if ((size_t)(c->end - c->at) < n) {
        c->bad = 1;
        c->at = c->end;
        return 0;
    }
    for (i = 0; i < n; i++) {
        v |= (uint32_t)c->at[i] << (8 * i);
    }
    c->at += n;
    return v;
}

static void skip(Cursor *c, size_t n) {
    if ((size_t)(c->end - c->at) < n) {
        c->bad = 1;
        c->at = c->end;
    } else {
        c->at += n;
    }
}

static uint32_t varint(Cursor *c) {
    uint32_t value = 0;
    unsigned shift = 0;
    for (;;) {
        uint32_t byte = take_le(c, 1);
        uint32_t bits = byte & 0x7f;
        if (shift == 28 && bits > 0x0f) {
            c->bad = 1;
            return 0;
        }
        value |= bits << shift;
        if ((byte & 0x80) == 0 || c->bad) {
            return value;
        }
        if (shift == 28) {
            c->bad = 1;
            return 0;
        }
        shift += 7;
    }
}

static int32_t delta(Cursor *c, int32_t previous) {
    uint32_t z = varint(c);
    uint32_t d = (z >> 1) ^ (0u - (z & 1));
    return (int32_t)((uint32_t)previous + d);
}

static uint32_t fnv1a(const unsigned char *p, size_t n) {
    uint32_t hash = 0x811c9dc5u;
    while (n--) {
        hash ^= *p++;
        hash *= 0x01000193u;
    }
    return hash;
}

typedef struct Step {
    unsigned op;
    int32_t actuator;
    uint32_t gain_index;
    int32_t setpoint, measurement, feed_forward, applied;
    int has_applied;
    int32_t command;
    uint16_t status;
} Step;

enum { OP_STEP, OP_ENGAGE, OP_TRACK, OP_RESET, OP_RETUNE };

/* The step after `prev` (most fields are deltas from it). */
static Step read_step(Cursor *c, const Step *prev) {
    Step s = *prev;
    unsigned head = take_le(c, 1);
    if (head & 0x80) {
        c->bad = 1;
    }
    s.op = head & 7;
    switch (s.op) {
    case OP_ENGAGE:
    case OP_TRACK:
        s.actuator = delta(c, prev->command);
        break;
    case OP_RETUNE:
        s.gain_index = varint(c);
        break;
    case OP_STEP:
    case OP_RESET:
        break;
    default:
        c->bad = 1; /* schedule (version 2) or invalid */
    }
    if (head & (1u << 3)) {
        s.setpoint = delta(c, prev->setpoint);
    }
    if (head & (1u << 4)) {
        s.feed_forward = delta(c, prev->feed_forward);
    }
    s.measurement = delta(c, prev->measurement);
    s.has_applied = (head & (1u << 5)) != 0;
    if (s.has_applied) {
        s.applied = delta(c, prev->command);
    }
    s.command = delta(c, prev->command);
    if (head & (1u << 6)) {
        s.status = (uint16_t)varint(c);
    }
    return s;
}

/* ---- the replay ---- */

static EkcLoop pi;
static EkcSlimLoop slim;

/* The result of a step refused with `code` (as the library packs it). */
static EkcStepResult refused(EkcCode code) {
    return (EkcStepResult)(uint16_t)code << EKC_RESULT_CODE_SHIFT;
}

/* One step through the C interface, exactly as boards/replay/src/replay.rs
 * does it through the Rust one. Returns the step's result, or an error
 * code alone (ekc_result_code) if an operation before it failed. */
static EkcStepResult apply(unsigned scenario, const Step *s) {
    EkcExtra extra = { s->feed_forward, s->applied, (uint8_t)(s->has_applied ? 1 : 0) };
    int plain = s->feed_forward == 0 && !s->has_applied;
    EkcCode code = EKC_OK;
    switch (s->op) {
    case OP_ENGAGE:
        code = ekc_engage(&pi, s->actuator);
        break;
    case OP_TRACK:
        return ekc_track(&pi, s->setpoint, s->measurement, &extra, s->actuator);
    case OP_RESET:
        code = ekc_reset(&pi);
        break;
    case OP_RETUNE:
        if (s->gain_index >= golden_gain_counts[scenario]) {
            return refused(EKC_ERR_CONFIG_OTHER);
        }
        code = ekc_retune_gains(&pi, golden_gains[scenario][s->gain_index].kp,
                                golden_gains[scenario][s->gain_index].ki_ts);
        break;
    default:
        break;
    }
    if (code != EKC_OK) {
        return refused(code);
    }
    return plain ? ekc_step(&pi, s->setpoint, s->measurement)
                 : ekc_step_with(&pi, s->setpoint, s->measurement, &extra);
}

/* One step of the 16-bit set through the 16-bit C interface; the signals
 * were checked to fit 16 bits. */
static EkcStepResult apply_slim(unsigned scenario, const Step *s) {
    int16_t setpoint = (int16_t)s->setpoint, measurement = (int16_t)s->measurement;
    EkcSlimExtra extra = { (int16_t)s->feed_forward, (int16_t)s->applied,
                           (uint8_t)(s->has_applied ? 1 : 0) };
    int plain = s->feed_forward == 0 && !s->has_applied;
    EkcCode code = EKC_OK;
    switch (s->op) {
    case OP_ENGAGE:
        code = ekc_slim_engage(&slim, (int16_t)s->actuator);
        break;
    case OP_TRACK:
        return ekc_slim_track(&slim, setpoint, measurement, &extra, (int16_t)s->actuator);
    case OP_RESET:
        code = ekc_slim_reset(&slim);
        break;
    case OP_RETUNE:
        if (s->gain_index >= slim_gain_counts[scenario]) {
            return refused(EKC_ERR_CONFIG_OTHER);
        }
        code = ekc_slim_retune_gains(&slim, slim_gains[scenario][s->gain_index].kp,
                                     slim_gains[scenario][s->gain_index].ki_ts);
        break;
    default:
        break;
    }
    if (code != EKC_OK) {
        return refused(code);
    }
    return plain ? ekc_slim_step(&slim, setpoint, measurement)
                 : ekc_slim_step_with(&slim, setpoint, measurement, &extra);
}

static int fits_16(int32_t v) { return v >= -32768 && v <= 32767; }

/* A vector set as the firmware holds it. */
typedef struct Set {
    const char *what;            /* for the messages */
    const unsigned char *bytes;
    size_t len;
    unsigned version;            /* 1: Q16.16 (golden.ekv); 3: 16-bit (slim16.ekv) */
    unsigned count;
    const char *const *names;
    const EkcCoefficients *const *configs;
} Set;

/* Replay every scenario of `set`; 0 if the file read to the end and every
 * call succeeded (mismatches are counted, not errors). */
static int replay_set(const Set *set, unsigned long *steps_out, unsigned long *mismatches_out) {
    Cursor c = { set->bytes, set->bytes + set->len, 0 };
    unsigned scenarios, version, i;
    uint32_t checksum;
    int slim16 = set->version == 3;
    unsigned long total_steps = 0, total_mismatches = 0;
    if (take_le(&c, 4) != 0x46564b45u) { /* "EKVF" */
        printf("replay %s: ERROR not a vector file\n", set->what);
        return 1;
    }
    version = take_le(&c, 1);
    scenarios = take_le(&c, 1);
    checksum = take_le(&c, 4);
    if (version != set->version || scenarios != set->count ||
        fnv1a(c.at, (size_t)(c.end - c.at)) != checksum) {
        printf("replay %s: ERROR version, scenario count or checksum\n", set->what);
        return 1;
    }
    for (i = 0; i < scenarios; i++) {
        unsigned name_len = take_le(&c, 1), flags, steps, k;
        const char *name = (const char *)c.at;
        unsigned long mismatches = 0, printed = 0;
        uint32_t steps_len;
        const unsigned char *steps_end;
        Step step;
        EkcCode code;
        skip(&c, name_len);
        flags = take_le(&c, 1);
        skip(&c, 8 * 8); /* the settings: the firmware has them as coefficients */
        for (k = 0; k < 4; k++) {
            if (flags & (1u << k)) {
                skip(&c, 8);
            }
        }
        if (slim16) {
            skip(&c, 4 * 8 + 2); /* the scaling: the raw values are what the loop sees */
        }
        skip(&c, 10 * take_le(&c, 1)); /* gain pairs: in tables.h too */
        steps = take_le(&c, 2);
        steps_len = take_le(&c, 4);
        if (c.bad || name_len != strlen(set->names[i]) ||
            memcmp(name, set->names[i], name_len) != 0) {
            printf("replay %s: ERROR vector file and tables disagree\n", set->what);
            return 1;
        }
        steps_end = c.at + steps_len;
        code = slim16 ? ekc_slim_load(&slim, set->configs[i]) : ekc_load(&pi, set->configs[i]);
        if (code != EKC_OK) {
            printf("replay: ERROR %s: load gave %ld\n", set->names[i], (long)code);
            return 1;
        }
        memset(&step, 0, sizeof step);
        for (k = 0; k < steps; k++) {
            int32_t command;
            uint16_t status;
            step = read_step(&c, &step);
            if (c.bad || c.at > steps_end ||
                (slim16 && !(fits_16(step.setpoint) && fits_16(step.measurement) &&
                             fits_16(step.feed_forward) && fits_16(step.applied) &&
                             fits_16(step.actuator) && fits_16(step.command)))) {
                printf("replay: ERROR %s: malformed step %u\n", set->names[i], k);
                return 1;
            }
            if (slim16) {
                EkcStepResult r = apply_slim(i, &step);
                code = ekc_result_code(r);
                command = ekc_slim_result_command(r);
                status = ekc_result_status(r);
            } else {
                EkcStepResult r = apply(i, &step);
                code = ekc_result_code(r);
                command = ekc_result_command(r);
                status = ekc_result_status(r);
            }
            if (code != EKC_OK) {
                printf("replay: ERROR %s step %u: code %ld\n", set->names[i], k, (long)code);
                return 1;
            }
            if (command != step.command || status != step.status) {
                if (printed++ < 8) {
                    printf("  MISMATCH %s (C interface) step %u: command want %#010lx got %#010lx, "
                           "status want %#06x got %#06x\n",
                           set->names[i], k, (unsigned long)(uint32_t)step.command,
                           (unsigned long)(uint32_t)command, step.status, status);
                }
                mismatches++;
            }
        }
        if (c.at != steps_end) {
            printf("replay: ERROR %s: step section length\n", set->names[i]);
            return 1;
        }
        printf("  %s %s, C interface (%u steps, %lu mismatches)\n", mismatches ? "FAIL" : "ok",
               set->names[i], steps, mismatches);
        total_steps += steps;
        total_mismatches += mismatches;
    }
    if (c.at != c.end) {
        printf("replay %s: ERROR bytes after the last scenario\n", set->what);
        return 1;
    }
    printf("replay %s (C interface): %u scenario runs, %lu steps, %lu mismatches\n", set->what,
           scenarios, total_steps, total_mismatches);
    *steps_out = total_steps;
    *mismatches_out = total_mismatches;
    return 0;
}

static const Set golden_set = { "golden", golden_vectors, GOLDEN_LEN, 1, GOLDEN_SCENARIOS,
                                golden_names, golden_configs };
static const Set slim_set = { "slim16", slim_vectors, SLIM_LEN, 3, SLIM_SCENARIOS,
                              slim_names, slim_configs };

/* ---- timing (the method of boards/replay/src/cost.rs) ---- */

#define SYST_CSR (*(volatile uint32_t *)0xE000E010)
#define SYST_RVR (*(volatile uint32_t *)0xE000E014)
#define SYST_CVR (*(volatile uint32_t *)0xE000E018)

static inline uint32_t ticks(void) { return ~SYST_CVR & 0x00ffffffu; }

/* A compiler barrier (GCC): memory written before it (the extra inputs)
 * is written before it, so the timed window holds the call, its argument
 * registers and the return, as in cost.rs, and not the filling of the
 * struct (which GCC otherwise moves past the first counter read:
 * measured, up to 7 instructions). The result comes back in registers. */
#define BARRIER() __asm__ volatile("" ::: "memory")

typedef struct Cost {
    uint32_t min, max, total, overhead;
} Cost;

static void cost_start(Cost *c) {
    uint32_t a = ticks();
    uint32_t b = ticks();
    c->overhead = (b - a) & 0x00ffffffu;
    c->min = UINT32_MAX;
    c->max = 0;
    c->total = 0;
}

static void cost_add(Cost *c, uint32_t a, uint32_t b) {
    uint32_t t = (b - a) & 0x00ffffffu;
    uint32_t n;
    t = t > c->overhead ? t - c->overhead : 0;
    n = (uint32_t)(((uint64_t)t * RATE_INSTRUCTIONS + RATE_TICKS / 2) / RATE_TICKS);
    if (n < c->min) c->min = n;
    if (n > c->max) c->max = n;
    c->total += n;
}

static void print_cost(const char *what, const Cost *c) {
    uint32_t mean = c->total * 10 / COST_STEPS;
    printf("cost %s: min %lu mean %lu.%lu max %lu instructions per step (%d steps)\n", what,
           (unsigned long)c->min, (unsigned long)(mean / 10), (unsigned long)(mean % 10),
           (unsigned long)c->max, COST_STEPS);
}

static int32_t q_int(int x) { return (int32_t)x * 65536; }

static int32_t setpoint_of(unsigned k) {
    return k < 64 ? q_int(4) : k < 128 ? q_int(40) : k < 192 ? q_int(-3) : q_int(1);
}

/* y + (u - y)/8, rounded to nearest with ties toward +infinity: what
 * FixedCoef 0.125 does in cost.rs (saturation never acts here). */
static int32_t plant(int32_t y, int32_t u) { return y + ((u - y + 4) >> 3); }

static int time_full(void) {
    Cost c;
    int32_t y = 0, applied = 0;
    unsigned k;
    if (ekc_load(&pi, &cost_full) != EKC_OK) return 1;
    cost_start(&c);
    for (k = 0; k < COST_STEPS; k++) {
        int32_t setpoint = setpoint_of(k);
        EkcExtra extra = { q_int(1), applied, 1 };
        EkcStepResult r;
        uint32_t a, b;
        BARRIER();
        a = ticks();
        r = ekc_step_with(&pi, setpoint, y, &extra);
        b = ticks();
        BARRIER();
        if (ekc_result_code(r) != EKC_OK) return 1;
        cost_add(&c, a, b);
        applied = ekc_result_command(r) > q_int(8) ? q_int(8) : ekc_result_command(r);
        y = plant(y, applied);
    }
    print_cost("c full", &c);
    return 0;
}

static int time_minimal(void) {
    Cost c;
    int32_t y = 0;
    unsigned k;
    if (ekc_load(&pi, &cost_minimal) != EKC_OK) return 1;
    cost_start(&c);
    for (k = 0; k < COST_STEPS; k++) {
        int32_t setpoint = setpoint_of(k);
        EkcStepResult r;
        uint32_t a, b;
        BARRIER();
        a = ticks();
        r = ekc_step(&pi, setpoint, y);
        b = ticks();
        BARRIER();
        if (ekc_result_code(r) != EKC_OK) return 1;
        cost_add(&c, a, b);
        y = plant(y, ekc_result_command(r));
    }
    print_cost("c minimal", &c);
    return 0;
}

static int16_t s_int(int x) { return (int16_t)(x * SLIM_SCALE); }

static int16_t slim_setpoint_of(unsigned k) {
    return k < 64 ? s_int(4) : k < 128 ? s_int(40) : k < 192 ? s_int(-3) : s_int(1);
}

static int16_t slim_plant(int16_t y, int16_t u) {
    int32_t v = (int32_t)y + (((int32_t)u - y + 4) >> 3);
    return (int16_t)(v > 32767 ? 32767 : v < -32768 ? -32768 : v);
}

static int time_slim_full(void) {
    Cost c;
    int16_t y = 0, applied = 0;
    unsigned k;
    if (ekc_slim_load(&slim, &cost_slim_full) != EKC_OK) return 1;
    cost_start(&c);
    for (k = 0; k < COST_STEPS; k++) {
        int16_t setpoint = slim_setpoint_of(k);
        EkcSlimExtra extra = { s_int(1), applied, 1 };
        EkcStepResult r;
        uint32_t a, b;
        BARRIER();
        a = ticks();
        r = ekc_slim_step_with(&slim, setpoint, y, &extra);
        b = ticks();
        BARRIER();
        if (ekc_result_code(r) != EKC_OK) return 1;
        cost_add(&c, a, b);
        applied = ekc_slim_result_command(r) > s_int(8) ? s_int(8) : ekc_slim_result_command(r);
        y = slim_plant(y, applied);
    }
    print_cost("c slim16 full", &c);
    return 0;
}

static int time_slim_minimal(void) {
    Cost c;
    int16_t y = 0;
    unsigned k;
    if (ekc_slim_load(&slim, &cost_slim_minimal) != EKC_OK) return 1;
    cost_start(&c);
    for (k = 0; k < COST_STEPS; k++) {
        int16_t setpoint = slim_setpoint_of(k);
        EkcStepResult r;
        uint32_t a, b;
        BARRIER();
        a = ticks();
        r = ekc_slim_step(&slim, setpoint, y);
        b = ticks();
        BARRIER();
        if (ekc_result_code(r) != EKC_OK) return 1;
        cost_add(&c, a, b);
        y = slim_plant(y, ekc_slim_result_command(r));
    }
    print_cost("c slim16 minimal", &c);
    return 0;
}

int main(void) {
    int failed;
    printf("evenkeel C firmware: %s\n", BOARD_NAME);
    printf("vectors: golden %d bytes, slim16 %d bytes\n", GOLDEN_LEN, SLIM_LEN);
    {
        unsigned long steps = 0, mismatches = 0;
        failed = replay_set(&golden_set, &steps, &mismatches) != 0 || mismatches != 0 || steps == 0;
        steps = 0;
        mismatches = 0;
        failed |= replay_set(&slim_set, &steps, &mismatches) != 0 || mismatches != 0 || steps == 0;
    }
    SYST_RVR = 0x00ffffffu;
    SYST_CVR = 0;
    SYST_CSR = 5; /* enable, core clock, no interrupt */
    failed |= time_full();
    failed |= time_minimal();
    failed |= time_slim_full();
    failed |= time_slim_minimal();
    printf("ram c: %d bytes per EkcLoop, %d per EkcSlimLoop\n", EKC_LOOP_SIZE, EKC_SLIM_LOOP_SIZE);
    printf("verdict: %s\n", failed ? "FAIL" : "PASS");
    return failed ? 1 : 0;
}
