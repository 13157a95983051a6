/*
 * Cost of one pf_line_push through the C ABI (lean and full tier), run by
 * hand, not by CI:
 *   gcc -std=c99 -O2 -I ffi-c/include tests/c/bench_push.c \
 *       target/release/libplumbfit.a -lgcc_s -lutil -lrt -lpthread -lm -ldl -lc \
 *       -o bench_push && ./bench_push [pairs]
 * Prints ns per pair by wall clock (CLOCK_MONOTONIC) and by this process's
 * CPU time (CLOCK_PROCESS_CPUTIME_ID; the better figure on a shared,
 * loaded machine). Invented data.
 */
#define _POSIX_C_SOURCE 199309L
#include "plumbfit.h"

#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double clock_s(clockid_t id) {
    struct timespec t;
    clock_gettime(id, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static pf_line_full_storage storage;

static int run(uint32_t tier, const char *name, unsigned long long n) {
    pf_line *l = NULL;
    unsigned long long i;
    double t0, t1, c0, c1, x = 0.0, y = 0.0, slope = 0.0, intercept = 0.0;
    if (pf_line_init_in(&storage, sizeof storage, tier, &l) != PF_OK) return 1;
    t0 = clock_s(CLOCK_MONOTONIC);
    c0 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    for (i = 0; i < n; i++) {
        /* Cheap varying inputs so the loop is not folded away. */
        x += 0.001;
        y = 2.0 * x + (double)(i & 7) * 0.01;
        if (pf_line_push(l, x, y) != PF_OK) return 1;
    }
    c1 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    t1 = clock_s(CLOCK_MONOTONIC);
    if (pf_line_slope_intercept(l, &slope, &intercept) != PF_OK) return 1;
    printf("%s tier: %llu pushes: %.2f ns/pair wall, %.2f ns/pair cpu (slope %.6f)\n", name, n,
           1e9 * (t1 - t0) / (double)n, 1e9 * (c1 - c0) / (double)n, slope);
    return 0;
}

int main(int argc, char **argv) {
    unsigned long long n = argc > 1 ? strtoull(argv[1], NULL, 10) : 100000000ull;
    if (run(PF_TIER_LEAN, "lean", n)) return 1;
    if (run(PF_TIER_FULL, "full", n)) return 1;
    return 0;
}
