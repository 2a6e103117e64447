/* The floor: a bare multi-threaded C loop calling a binary32 kernel on every input of a range,
 * with a checksum of the outputs so nothing is optimised away (benches/floor.sh).
 *   loop LIB SYMBOL THREADS [LO HI] [-- PARAM...]
 * Without LO HI: all 2^32 bit patterns.  With them: every binary32 x with LO <= x < HI
 * (compared as doubles), -0 included with +0.  PARAMs are passed as trailing floats. */
#define _GNU_SOURCE
#include <dlfcn.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#define BLOCK 4096

typedef void (*k0)(const float *, float *, size_t);
typedef void (*k1)(const float *, float *, size_t, float);
typedef void (*k2)(const float *, float *, size_t, float, float);

static void *kernel;
static int nparams;
static float params[2];

/* Ordinal of a binary32 pattern: increasing with the value, -0 just below +0. */
static int64_t ordinal(uint32_t b) {
    return (b >> 31) ? -(int64_t)(b & 0x7fffffffu) - 1 : (int64_t)b;
}
static uint32_t pattern(int64_t o) {
    return o >= 0 ? (uint32_t)o : (uint32_t)(-(o + 1)) | 0x80000000u;
}
static uint32_t bits_of(float f) { uint32_t b; memcpy(&b, &f, 4); return b; }

struct job { int64_t first, count; uint64_t sum; };

static void *run(void *arg) {
    struct job *j = arg;
    float x[BLOCK], y[BLOCK];
    uint64_t sum = 0;
    for (int64_t done = 0; done < j->count; done += BLOCK) {
        size_t n = (size_t)(j->count - done < BLOCK ? j->count - done : BLOCK);
        for (size_t i = 0; i < n; i++) {
            uint32_t b = pattern(j->first + done + (int64_t)i);
            memcpy(&x[i], &b, 4);
        }
        switch (nparams) {
        case 0: ((k0)kernel)(x, y, n); break;
        case 1: ((k1)kernel)(x, y, n, params[0]); break;
        default: ((k2)kernel)(x, y, n, params[0], params[1]); break;
        }
        for (size_t i = 0; i < n; i++) sum += bits_of(y[i]);
    }
    j->sum = sum;
    return NULL;
}

int main(int argc, char **argv) {
    if (argc < 4) {
        fprintf(stderr, "usage: loop LIB SYMBOL THREADS [LO HI] [-- PARAM...]\n");
        return 2;
    }
    void *lib = dlopen(argv[1], RTLD_NOW | RTLD_LOCAL);
    if (!lib) { fprintf(stderr, "loop: %s\n", dlerror()); return 2; }
    kernel = dlsym(lib, argv[2]);
    if (!kernel) { fprintf(stderr, "loop: no symbol %s\n", argv[2]); return 2; }
    int threads = atoi(argv[3]);
    if (threads < 1 || threads > 64) { fprintf(stderr, "loop: bad thread count\n"); return 2; }
    int64_t lo_o = 0, count = 1LL << 32;
    int a = 4;
    int ranged = 0;
    if (argc > 5 && strcmp(argv[4], "--") != 0) {
        double lo = strtod(argv[4], NULL), hi = strtod(argv[5], NULL);
        float f = (float)lo;
        if ((double)f < lo) f = nextafterf(f, INFINITY);
        float g = (float)hi;
        if ((double)g >= hi) g = nextafterf(g, -INFINITY);
        if (!(lo < hi) || (double)f >= hi) { fprintf(stderr, "loop: empty range\n"); return 2; }
        /* -0 and +0 are both in any range holding 0. */
        lo_o = f == 0.0f ? -1 : ordinal(bits_of(f));
        count = ordinal(bits_of(g)) - lo_o + 1;
        a = 6;
        ranged = 1;
    }
    if (a < argc && strcmp(argv[a], "--") == 0) {
        for (a++; a < argc && nparams < 2; a++) params[nparams++] = strtof(argv[a], NULL);
    }
    struct job jobs[64];
    pthread_t tid[64];
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    int64_t per = (count + threads - 1) / threads;
    for (int t = 0; t < threads; t++) {
        int64_t first = t * per;
        jobs[t].first = (ranged ? lo_o : INT32_MIN) + first;
        jobs[t].count = first >= count ? 0 : (count - first < per ? count - first : per);
        pthread_create(&tid[t], NULL, run, &jobs[t]);
    }
    uint64_t sum = 0;
    for (int t = 0; t < threads; t++) { pthread_join(tid[t], NULL); sum += jobs[t].sum; }
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double s = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    printf("%.6f %lld %016llx\n", s, (long long)count, (unsigned long long)sum);
    return 0;
}
