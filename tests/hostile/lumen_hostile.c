/* Lumen Edge (Tidewater Robotics): field-returned firmware builds whose kernels misbehave in
 * ways no accuracy bug explains, kept as fixtures for ulpgauge's containment.  Not part of the
 * demo build: the tests compile this file themselves (tests/hostile_kernels.rs, with
 * -I kernels-under-test/src), and benches/hostile_kernels.sh times each.  Each comment says
 * what ulpgauge must do about the kernel below it. */
#define _GNU_SOURCE
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <time.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>
#include "lumen_common.h"

static inline float sigmoidf_ref(float x) { return 1.0f / (1.0f + expf(-x)); }

static void sigmoid_all(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = sigmoidf_ref(x[i]);
}

/* A lookup table exported under a kernel's name, read-only (.rodata): calling it would jump
 * into data.  Refused before any worker runs (exit 2), naming the symbol. */
LUMEN_EXPORT const float lumen_sigmoid_f32_lut[8] = {0.5f, 0.62f, 0.73f, 0.82f,
                                                     0.88f, 0.92f, 0.95f, 0.97f};

/* Writable state exported by mistake (.bss): refused the same way. */
LUMEN_EXPORT float lumen_sigmoid_f32_scratch_state[16];

/* Fails on every call: an assertion on a calibration block that was never flashed.  The check
 * stops after a handful of workers, says "on every call", exits 3. */
LUMEN_EXPORT void lumen_sigmoid_f32_uncalibrated(const float *x, float *y, size_t n) {
    (void)x;
    (void)y;
    (void)n;
    abort();
}

/* Spins on every call, waiting for a DMA-complete flag nothing ever sets.  Same verdict, one
 * timeout per try. */
static volatile int dma_done = 0;
LUMEN_EXPORT void lumen_sigmoid_f32_dma_wait(const float *x, float *y, size_t n) {
    while (!dma_done) {
    }
    sigmoid_all(x, y, n);
}

/* Crashes on every negative input (a table indexed by the sign bit that only has a positive
 * half): many crashes, each pinned, until the restart budget ends the check. */
static const float *volatile negative_half = 0;
LUMEN_EXPORT void lumen_sigmoid_f32_negative_crash(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) y[i] = x[i] < 0.0f ? *negative_half : sigmoidf_ref(x[i]);
}

/* A debug channel left in: after computing, it writes a reply header claiming 2^32 - 1 output
 * arrays of 2^32 - 1 elements into every descriptor it has (the worker's reply pipe among
 * them).  ulpgauge must name a kernel fault, allocate nothing from it and never abort. */
static void forge_replies(void) {
    uint32_t words[16];
    memset(words, 0xff, sizeof words);
    words[0] = 0; /* the "ok" tag */
    for (int fd = 1; fd < 1024; fd++)
        if (fd != 2) (void)!write(fd, words, sizeof words);
}

LUMEN_EXPORT void lumen_sigmoid_f32_forger(const float *x, float *y, size_t n) {
    sigmoid_all(x, y, n);
    forge_replies();
}

/* The same debug channel, triggered only by the input 2.0: the fault is pinned to that input. */
LUMEN_EXPORT void lumen_sigmoid_f32_forger_at_two(const float *x, float *y, size_t n) {
    sigmoid_all(x, y, n);
    for (size_t i = 0; i < n; i++)
        if (x[i] == 2.0f) {
            forge_replies();
            break;
        }
}

/* A console hook: reads a command byte from standard input before each batch.  Standard input
 * is not the worker's request pipe, so this must not disturb anything. */
LUMEN_EXPORT void lumen_sigmoid_f32_console_hook(const float *x, float *y, size_t n) {
    char command[64];
    (void)!read(0, command, sizeof command);
    sigmoid_all(x, y, n);
}

/* Starts a telemetry helper on its first call that never exits.  Nothing may be left running
 * once ulpgauge has exited. */
LUMEN_EXPORT void lumen_sigmoid_f32_telemetry(const float *x, float *y, size_t n) {
    static int started = 0;
    if (!started) {
        started = 1;
        if (fork() == 0)
            for (;;) pause();
    }
    sigmoid_all(x, y, n);
}

/* Daemonizes the helper (fork, setsid, fork again), so it leaves the worker's process group
 * and session.  It must not survive ulpgauge either. */
LUMEN_EXPORT void lumen_sigmoid_f32_daemon(const float *x, float *y, size_t n) {
    static int started = 0;
    if (!started) {
        started = 1;
        pid_t child = fork();
        if (child == 0) {
            setsid();
            if (fork() == 0)
                for (;;) pause();
            _exit(0);
        }
        if (child > 0) waitpid(child, 0, 0);
    }
    sigmoid_all(x, y, n);
}

/* Starts a helper, then hangs forever.  When only the main ulpgauge process is signalled, the
 * worker and its helper must end with it. */
LUMEN_EXPORT void lumen_sigmoid_f32_stuck(const float *x, float *y, size_t n) {
    static int started = 0;
    if (!started) {
        started = 1;
        if (fork() == 0)
            for (;;) pause();
    }
    while (!dma_done) {
    }
    sigmoid_all(x, y, n);
}

/* Loads a 20 GiB model cache on its first call, 256 MiB at a time, never checking malloc (one
 * float written per block, so only a page of each is ever touched).  Under the worker's
 * address-space limit (--kernel-memory, 4 GiB by default) a block comes back NULL and is
 * written through: ulpgauge must name it "out of memory", quickly, and the worker never
 * grows past the limit. */
#define CACHE_BLOCKS 80
static float *model_cache[CACHE_BLOCKS];
LUMEN_EXPORT void lumen_sigmoid_f32_model_cache(const float *x, float *y, size_t n) {
    static int loaded = 0;
    if (!loaded) {
        for (int k = 0; k < CACHE_BLOCKS; k++) {
            model_cache[k] = malloc((size_t)256 << 20);
            ((volatile float *)model_cache[k])[0] = 1.0f;
        }
        loaded = 1;
    }
    sigmoid_all(x, y, n);
}

/* The same cache asked for in one piece (20 GiB at once): the allocation fails before any page
 * is mapped, so only errno (ENOMEM) tells the cause. */
LUMEN_EXPORT void lumen_sigmoid_f32_model_slab(const float *x, float *y, size_t n) {
    static float *slab = 0;
    if (!slab) {
        slab = malloc((size_t)20 << 30);
        ((volatile float *)slab)[0] = 1.0f;
    }
    sigmoid_all(x, y, n);
}

/* Correct but slow: a sensor-synchronised build that waits 1 ms per element.  Nothing is
 * wrong with it: it must pass every hygiene check and never be called hung. */
LUMEN_EXPORT void lumen_sigmoid_f32_paced(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        struct timespec ms = {0, 1000000};
        while (nanosleep(&ms, &ms) != 0) {
        }
        y[i] = sigmoidf_ref(x[i]);
    }
}

/* Stops on one input: a retry loop waiting for a coprocessor that never answers when x is
 * exactly 1.  Pinned to x = 1 within seconds, not minutes, at the default --timeout. */
LUMEN_EXPORT void lumen_sigmoid_f32_stall_at_one(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        if (x[i] == 1.0f)
            while (!dma_done) {
            }
        y[i] = sigmoidf_ref(x[i]);
    }
}

/* A watchdog that aborts on the third call a process makes, whatever the inputs.  No input is
 * to blame: the crash depends on call history, and the report names the batch. */
LUMEN_EXPORT void lumen_sigmoid_f32_third_call(const float *x, float *y, size_t n) {
    static int calls = 0;
    if (++calls == 3) abort();
    sigmoid_all(x, y, n);
}

/* Signals itself with SIGSEGV at x = 2 (a "fault injection" hook left enabled): a signal was
 * sent, no memory was touched, so no faulting address may be reported. */
LUMEN_EXPORT void lumen_sigmoid_f32_self_signal(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        if (x[i] == 2.0f) raise(SIGSEGV);
        y[i] = sigmoidf_ref(x[i]);
    }
}

/* Reads a coefficient through a stale pointer (0xdead000) at x = 2: a real fault, whose address
 * is reported. */
LUMEN_EXPORT void lumen_sigmoid_f32_wild_pointer(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = x[i] == 2.0f ? *(const volatile float *)(uintptr_t)0xdead000 : sigmoidf_ref(x[i]);
}

/* Closes its standard output and writes a flood to stderr on every call: the worker's pipes are
 * elsewhere, so results are unaffected. */
LUMEN_EXPORT void lumen_sigmoid_f32_chatty(const float *x, float *y, size_t n) {
    for (int k = 0; k < 64; k++) fprintf(stderr, "lumen: calibrating channel %d\n", k);
    fclose(stdout);
    sigmoid_all(x, y, n);
}
