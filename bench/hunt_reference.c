/* The plain C floor of bench/hunt_speed.py: the hunt's semantics for n/2, (q n + d)/2, one core, no sieve.
 *
 *     hunt_reference Q D BOUND MAX_STEPS
 *
 * Every start s with 0 <= |s| <= BOUND, in the order 0, 1, -1, 2, -2, ..., is followed until its
 * orbit returns to s (a cycle through s), reaches a value v that precedes s (|v| < |s|, or v = |s|
 * when s < 0), would leave 64-bit arithmetic (detected before the step, as the Python kernel
 * does: |v| above (2^62 - |d|) / q), or passes MAX_STEPS steps.  It prints the counts of each
 * outcome, the total stopping time (the sum of the steps of the returns and the falls below,
 * which must equal HuntResult.steps of the Python engine when nothing escapes) and the seconds
 * spent, so that the two can be compared on the same machine.
 */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

int main(int argc, char **argv) {
    if (argc != 5) {
        fprintf(stderr, "usage: %s Q D BOUND MAX_STEPS\n", argv[0]);
        return 2;
    }
    const int64_t q = strtoll(argv[1], NULL, 10), d = strtoll(argv[2], NULL, 10);
    const int64_t bound = strtoll(argv[3], NULL, 10), max_steps = strtoll(argv[4], NULL, 10);
    const int64_t limit = (((int64_t)1 << 62) - llabs(d)) / q;
    int64_t returned = 0, fell = 0, escaped = 0, stalled = 0, stopping = 0;
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    for (int64_t mag = 0; mag <= bound; mag++) {
        for (int sign = 1; sign >= -1; sign -= 2) {
            if (mag == 0 && sign < 0) break;
            const int64_t s = sign * mag;
            const int64_t lo = s > 0 ? -s : s, hi = s > 0 ? s : 1 - s; /* v precedes s: lo < v < hi */
            int64_t n = s, k = 0;
            for (;;) {
                n = (n & 1) ? (q * n + d) >> 1 : n >> 1;
                k++;
                if (n == s) { returned++; stopping += k; break; }
                if (s != 0 && lo < n && n < hi) { fell++; stopping += k; break; }
                if (n > limit || n < -limit) { escaped++; break; }
                if (k >= max_steps) { stalled++; break; }
            }
        }
    }
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double seconds = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);
    printf("returned %" PRId64 " fell %" PRId64 " escaped %" PRId64 " stalled %" PRId64 " stopping %" PRId64
           " seconds %.6f\n", returned, fell, escaped, stalled, stopping, seconds);
    return 0;
}
