/* Plain C loop of the MOC interior update of rulecheck.physics.transient_grid.InteriorUpdate,
 * the reference for benchmarks/bench_moc_c.py (node-updates per second).
 *
 *   C_P(s) = H(s-1) + Q_d(s-1) (B_p - R_p |Q_d(s-1)|),  C_M(s) = H(s+1) - Q_u(s+1) (B_m - R_m |Q_u(s+1)|)
 *   H(s) = (C_P + C_M) / 2,  Q_u(s) = Q_d(s) = (C_P - C_M) / (2B)
 *
 * Usage: moc_reference IN OUT STEPS. IN holds n (as a double), then H, Q_u, Q_d, C_P, C_M
 * (n each), B_m, B_p, R_m, R_p (n-1 each), 1/(2B) (n). OUT receives H after STEPS steps.
 * Prints the seconds the loop took (clock_gettime, monotonic). Same operations in the same
 * order as the numpy update, so the heads agree to the last bit (no -ffast-math, no FMA).
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double *take(FILE *f, long n) {
    double *x = malloc(sizeof(double) * (size_t)(n > 0 ? n : 1));
    if (!x || fread(x, sizeof(double), (size_t)n, f) != (size_t)n) {
        fprintf(stderr, "moc_reference: short input\n");
        exit(2);
    }
    return x;
}

int main(int argc, char **argv) {
    if (argc != 4) {
        fprintf(stderr, "usage: moc_reference IN OUT STEPS\n");
        return 2;
    }
    FILE *in = fopen(argv[1], "rb");
    if (!in) { perror(argv[1]); return 2; }
    double nd;
    if (fread(&nd, sizeof nd, 1, in) != 1) { fprintf(stderr, "moc_reference: empty input\n"); return 2; }
    long n = (long)nd, steps = atol(argv[3]);
    if (n < 2 || n > 100000000L || steps < 1) { fprintf(stderr, "moc_reference: bad sizes\n"); return 2; }
    double *h = take(in, n), *qu = take(in, n), *qd = take(in, n), *cp = take(in, n), *cm = take(in, n);
    double *bm = take(in, n - 1), *bp = take(in, n - 1), *rm = take(in, n - 1), *rp = take(in, n - 1);
    double *inv2b = take(in, n);
    fclose(in);
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    for (long k = 0; k < steps; k++) {
        for (long s = 0; s < n - 1; s++) {
            double q = qu[s + 1];
            cm[s] = h[s + 1] - q * (bm[s] - rm[s] * fabs(q));
            double p = qd[s];
            cp[s + 1] = h[s] + p * (bp[s] - rp[s] * fabs(p));
        }
        for (long s = 0; s < n; s++) {
            h[s] = (cp[s] + cm[s]) * 0.5;
            qu[s] = (cp[s] - cm[s]) * inv2b[s];
            qd[s] = qu[s];
        }
    }
    clock_gettime(CLOCK_MONOTONIC, &t1);
    printf("%.9f\n", (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec));
    FILE *out = fopen(argv[2], "wb");
    if (!out || fwrite(h, sizeof(double), (size_t)n, out) != (size_t)n) { perror(argv[2]); return 2; }
    fclose(out);
    return 0;
}
