/* encode_bench.c: `make bench`'s encoding cases (issue 19): the simulated
 * acquisition (kw_acquisition) made and run on one thread with the grid
 * path (the default) and with the per-sample path (per_sample = 1, the
 * exact evaluation at every sample, which every run took before the grid
 * path), interleaved in one process. Prints, per case, the encoding time
 * (kw_acquisition_execute: the k-space), the whole run (create + execute:
 * coil fit and truth included), the ratio per-sample / grid, and the
 * largest difference between the two k-spaces relative to the largest
 * sample. Timings are benchmarks, never tests: the machine is shared.
 *
 * usage: kw_encode_bench [--quick] [--grid] [CASE]: --quick one round, not
 * three; --grid the grid path only; CASE (1..3) that case only. */
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "kw_acquire.h"

typedef struct bcase {
    const char *name, *phantom;
    size_t dims[3];
    int coils, slices;
    double target_s; /* the target for the encoding on one thread */
} bcase;

/* CPU seconds of the process: one thread, so its time on the CPU, which the
 * other loads of a shared machine do not inflate as they do wall time */
static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* One run: create + execute; the k-space into *ks (the caller frees). */
static int run_case(const bcase *c, int per_sample, double *t_exec, double *t_all, kw_cfloat **ks,
                    size_t *count)
{
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    o.phantom = c->phantom;
    memcpy(o.dims, c->dims, sizeof o.dims);
    o.fov_m[0] = o.fov_m[1] = o.fov_m[2] = 0.256;
    o.coils = c->coils;
    if (c->slices) {
        o.slices = c->slices;
        o.slice_thickness_m = 0.005;
    }
    o.per_sample = per_sample;
    kw_acquisition *a = NULL;
    double t0 = now();
    if (kw_acquisition_create(&a, &o)) {
        fprintf(stderr, "%s: %s\n", c->name, kw_last_error());
        return 1;
    }
    *count = kw_acquisition_kspace_count(a);
    *ks = kw_alloc_n(*count, sizeof **ks);
    double t1 = now();
    kw_status st = *ks ? kw_acquisition_execute(a, *ks, NULL, NULL, NULL, NULL) : KW_ENOMEM;
    double t2 = now();
    kw_acquisition_destroy(a);
    if (st) {
        fprintf(stderr, "%s: %s\n", c->name, kw_last_error());
        return 1;
    }
    *t_exec = t2 - t1;
    *t_all = t2 - t0;
    return 0;
}

int main(int argc, char **argv)
{
    int rounds = 3, grid_only = 0, only = 0;
    for (int a = 1; a < argc; a++) {
        if (strcmp(argv[a], "--quick") == 0)
            rounds = 1;
        else if (strcmp(argv[a], "--grid") == 0)
            grid_only = 1;
        else
            only = atoi(argv[a]);
    }
    static const bcase cases[] = {
        {"2-D 256^2, 8 coils (shepp-logan-modified)", "shepp-logan-modified", {0, 256, 256}, 8, 0, 0.5},
        {"multi-slice 4 x 96^2, 4 coils (weave3d)", "weave3d", {0, 96, 96}, 4, 4, 2.0},
        {"3-D 64^3, 8 coils (weave3d)", "weave3d", {64, 64, 64}, 8, 0, 2.0},
    };
    omp_set_num_threads(1);
    printf("\nencoding (kweave encode's k-space), one thread, CPU seconds; best of %d round(s), the two "
           "paths interleaved\n",
           rounds);
    printf("%-44s %11s %11s %7s %11s %11s %7s %9s %7s\n", "case", "exact enc", "grid enc", "ratio",
           "exact all", "grid all", "ratio", "max rel", "target");
    int fail = 0;
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        const bcase *c = &cases[i];
        if (only && (size_t)only != i + 1)
            continue;
        double best[2][2] = {{INFINITY, INFINITY}, {INFINITY, INFINITY}}, rel = 0;
        for (int r = 0; r < rounds; r++) {
            kw_cfloat *ks[2] = {NULL, NULL};
            size_t n[2] = {0, 0};
            for (int p = 0; p < 2 - grid_only; p++) {
                double te, ta;
                if (run_case(c, p, &te, &ta, &ks[p], &n[p])) {
                    fail = 1;
                    break;
                }
                best[p][0] = te < best[p][0] ? te : best[p][0];
                best[p][1] = ta < best[p][1] ? ta : best[p][1];
            }
            if (ks[0] && ks[1] && n[0] == n[1]) {
                double dmax = 0, vmax = 0;
                for (size_t k = 0; k < n[0]; k++) {
                    double d = cabs((double complex)ks[0][k] - (double complex)ks[1][k]);
                    double v = cabs((double complex)ks[1][k]);
                    dmax = d > dmax ? d : dmax;
                    vmax = v > vmax ? v : vmax;
                }
                rel = vmax > 0 ? dmax / vmax : dmax;
            }
            kw_free(ks[0]);
            kw_free(ks[1]);
            if (fail)
                break;
        }
        if (fail)
            break;
        /* best[1]: per_sample = 1 (exact), best[0]: the grid path */
        printf("%-44s %10.3fs %10.3fs %6.1fx %10.3fs %10.3fs %6.1fx %9.1e %6.1fs\n", c->name,
               best[1][0], best[0][0], best[1][0] / best[0][0], best[1][1], best[0][1],
               best[1][1] / best[0][1], rel, c->target_s);
    }
    printf("enc: kw_acquisition_execute (the k-space); all: create (coil fit, truth) + execute;\n"
           "ratio = exact (per-sample path) / grid path; max rel = max |grid - exact| / max |exact|\n");
    return fail;
}
