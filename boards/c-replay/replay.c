/*
 * The C firmware: replays the golden vectors (shared/vectors/golden.ekv,
 * format in shared/vectors/FORMAT.md) through the C interface of the
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

static unsigned long replay_steps, replay_mismatches;

/* One step through the C interface, exactly as boards/replay/src/replay.rs
 * does it through the Rust one. Returns EKC_OK or the call's error. */
static EkcCode apply(unsigned scenario, const Step *s, EkcOutput *out) {
    EkcInput in = { s->setpoint, s->measurement, s->feed_forward, s->applied,
                    (uint8_t)(s->has_applied ? 1 : 0) };
    int plain = s->feed_forward == 0 && !s->has_applied;
    EkcCode code = EKC_OK;
    switch (s->op) {
    case OP_ENGAGE:
        code = ekc_engage(&pi, s->actuator);
        break;
    case OP_TRACK:
        return ekc_track(&pi, &in, s->actuator, out);
    case OP_RESET:
        code = ekc_reset(&pi);
        break;
    case OP_RETUNE:
        if (s->gain_index >= golden_gain_counts[scenario]) {
            return EKC_ERR_CONFIG_OTHER;
        }
        code = ekc_retune_gains(&pi, golden_gains[scenario][s->gain_index].kp,
                                golden_gains[scenario][s->gain_index].ki_ts);
        break;
    default:
        break;
    }
    if (code != EKC_OK) {
        return code;
    }
    return plain ? ekc_step(&pi, s->setpoint, s->measurement, out)
                 : ekc_step_with(&pi, &in, out);
}

/* Replay every scenario; 0 if the file read to the end and every call
 * succeeded (mismatches are counted, not errors). */
static int replay(void) {
    Cursor c = { golden_vectors, golden_vectors + GOLDEN_LEN, 0 };
    unsigned scenarios, version, i;
    uint32_t checksum;
    if (take_le(&c, 4) != 0x46564b45u) { /* "EKVF" */
        puts("replay: ERROR not a vector file");
        return 1;
    }
    version = take_le(&c, 1);
    scenarios = take_le(&c, 1);
    checksum = take_le(&c, 4);
    if (version != 1 || scenarios != GOLDEN_SCENARIOS ||
        fnv1a(c.at, (size_t)(c.end - c.at)) != checksum) {
        puts("replay: ERROR version, scenario count or checksum");
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
        skip(&c, 10 * take_le(&c, 1)); /* gain pairs: in tables.h too */
        steps = take_le(&c, 2);
        steps_len = take_le(&c, 4);
        if (c.bad || name_len != strlen(golden_names[i]) ||
            memcmp(name, golden_names[i], name_len) != 0) {
            puts("replay: ERROR vector file and tables disagree");
            return 1;
        }
        steps_end = c.at + steps_len;
        code = ekc_load(&pi, golden_configs[i]);
        if (code != EKC_OK) {
            printf("replay: ERROR %s: ekc_load gave %ld\n", golden_names[i], (long)code);
            return 1;
        }
        memset(&step, 0, sizeof step);
        for (k = 0; k < steps; k++) {
            EkcOutput out = { 0, 0 };
            step = read_step(&c, &step);
            if (c.bad || c.at > steps_end) {
                printf("replay: ERROR %s: malformed step %u\n", golden_names[i], k);
                return 1;
            }
            code = apply(i, &step, &out);
            if (code != EKC_OK) {
                printf("replay: ERROR %s step %u: code %ld\n", golden_names[i], k, (long)code);
                return 1;
            }
            if (out.command != step.command || out.status != step.status) {
                if (printed++ < 8) {
                    printf("  MISMATCH %s (C interface) step %u: command want %#010lx got %#010lx, "
                           "status want %#06x got %#06x\n",
                           golden_names[i], k, (unsigned long)(uint32_t)step.command,
                           (unsigned long)(uint32_t)out.command, step.status, out.status);
                }
                mismatches++;
            }
        }
        if (c.at != steps_end) {
            printf("replay: ERROR %s: step section length\n", golden_names[i]);
            return 1;
        }
        printf("  %s %s, C interface (%u steps, %lu mismatches)\n", mismatches ? "FAIL" : "ok",
               golden_names[i], steps, mismatches);
        replay_steps += steps;
        replay_mismatches += mismatches;
    }
    if (c.at != c.end) {
        puts("replay: ERROR bytes after the last scenario");
        return 1;
    }
    printf("replay (C interface): %u scenario runs, %lu steps, %lu mismatches\n", scenarios,
           replay_steps, replay_mismatches);
    return 0;
}

/* ---- timing (the method of boards/replay/src/cost.rs) ---- */

#define SYST_CSR (*(volatile uint32_t *)0xE000E010)
#define SYST_RVR (*(volatile uint32_t *)0xE000E014)
#define SYST_CVR (*(volatile uint32_t *)0xE000E018)

static inline uint32_t ticks(void) { return ~SYST_CVR & 0x00ffffffu; }

/* A compiler barrier (GCC): memory written before it (the input struct)
 * is written before it, and memory read after it (the output) is read
 * after it, so the timed window holds the call, its argument registers and
 * the return, as in cost.rs, and not the filling of the input struct
 * (which GCC otherwise moves past the first counter read: measured, up to
 * 7 instructions). */
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
        EkcInput in = { setpoint_of(k), y, q_int(1), applied, 1 };
        EkcOutput out;
        uint32_t a, b;
        EkcCode code;
        BARRIER();
        a = ticks();
        code = ekc_step_with(&pi, &in, &out);
        b = ticks();
        BARRIER();
        if (code != EKC_OK) return 1;
        cost_add(&c, a, b);
        applied = out.command > q_int(8) ? q_int(8) : out.command;
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
        int32_t r = setpoint_of(k);
        EkcOutput out;
        uint32_t a, b;
        EkcCode code;
        BARRIER();
        a = ticks();
        code = ekc_step(&pi, r, y, &out);
        b = ticks();
        BARRIER();
        if (code != EKC_OK) return 1;
        cost_add(&c, a, b);
        y = plant(y, out.command);
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
        EkcSlimInput in = { slim_setpoint_of(k), y, s_int(1), applied, 1 };
        EkcSlimOutput out;
        uint32_t a, b;
        EkcCode code;
        BARRIER();
        a = ticks();
        code = ekc_slim_step_with(&slim, &in, &out);
        b = ticks();
        BARRIER();
        if (code != EKC_OK) return 1;
        cost_add(&c, a, b);
        applied = out.command > s_int(8) ? s_int(8) : out.command;
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
        int16_t r = slim_setpoint_of(k);
        EkcSlimOutput out;
        uint32_t a, b;
        EkcCode code;
        BARRIER();
        a = ticks();
        code = ekc_slim_step(&slim, r, y, &out);
        b = ticks();
        BARRIER();
        if (code != EKC_OK) return 1;
        cost_add(&c, a, b);
        y = slim_plant(y, out.command);
    }
    print_cost("c slim16 minimal", &c);
    return 0;
}

int main(void) {
    int failed;
    printf("evenkeel C firmware: %s\n", BOARD_NAME);
    printf("vectors: golden %d bytes\n", GOLDEN_LEN);
    failed = replay() != 0 || replay_mismatches != 0 || replay_steps == 0;
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
