/* bench.c: in-process timings for `make bench` (bench/run.py drives it and
 * prints the table). Each case reads the same .npy input the peers read and
 * prints one JSON line: {"case", "threads", "median_ms", "min_ms", "max_ms"}.
 *
 *   kw_bench rss   FILE THREADS REPS   kweave's fused inverse FFT + RSS
 *                                      interleaved with its floor: the plain
 *                                      batched backward FFTW plans (in place,
 *                                      and out of place allowed to destroy
 *                                      its input, FFTW_MEASURE, unnormalised,
 *                                      execute only, the input refreshed
 *                                      untimed before each run), order
 *                                      rotated each repetition; prints each
 *                                      one's times, the floor (the plan of
 *                                      lower median) and the repetition-by-
 *                                      repetition ratios kweave / floor
 *   kw_bench iter  N COILS THREADS REPS
 *                                      one Cartesian CG-SENSE iteration and
 *                                      one FISTA (db4) iteration on N x N,
 *                                      COILS coils, a third of the lines
 *                                      sampled (time between the solver's
 *                                      progress reports), interleaved with
 *                                      the floor: a forward and a backward
 *                                      batched FFTW plan over the coils
 *   kw_bench fft   FILE THREADS REPS   kweave's centered transform + RSS in two
 *                                      steps (kw_fft in place on a copy), for
 *                                      comparison with the fused path
 *   kw_bench nufft NDIM N M TOL THREADS REPS COILS
 *                                      NUFFT on M uniformly random samples
 *                                      of an N^NDIM image, COILS through one
 *                                      plan: plan time, forward and adjoint
 *                                      time, samples per second, and the
 *                                      error against the exact NDFT (forward:
 *                                      256 samples; adjoint: 32 pixels)
 *   kw_bench normal NDIM N M THREADS REPS COILS
 *                                      one E^H W E application (Toeplitz
 *                                      embedding, the cost of a CG-SENSE or
 *                                      FISTA iteration) against its floor:
 *                                      2 bare FFTW transforms per coil on the
 *                                      doubled grid
 *   kw_bench run REPS CMD ARGS...      whole processes: wall time and peak
 *                                      resident memory (ru_maxrss of the child,
 *                                      forked from this small process so that
 *                                      the parent's pages are not counted)
 */
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>
#include <fftw3.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "kw_encoder.h"
#include "kw_fft.h"
#include "kw_nufft.h"
#include "kw_rng.h"
#include "kw_rssrecon.h"
#include "kw_solvers.h"
#include "npy.h"

static double now_ms(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return t.tv_sec * 1e3 + t.tv_nsec * 1e-6;
}

/* CPU time of the calling thread: with one thread every transform and pass
 * runs here, so a moment without the core (the machine is shared) is not
 * counted; reported beside the wall times for one thread. */
static double cpu_ms(void)
{
    struct timespec t;
    clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
    return t.tv_sec * 1e3 + t.tv_nsec * 1e-6;
}

static int cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void report(const char *name, int threads, double *t, int reps)
{
    qsort(t, (size_t)reps, sizeof *t, cmp);
    double med = reps % 2 ? t[reps / 2] : 0.5 * (t[reps / 2 - 1] + t[reps / 2]);
    printf("{\"case\": \"%s\", \"threads\": %d, \"median_ms\": %.4f, \"min_ms\": %.4f, "
           "\"max_ms\": %.4f, \"reps\": %d}\n",
           name, threads, med, t[0], t[reps - 1], reps);
}

static int run_processes(int reps, char **cmd)
{
    double *t = malloc(sizeof(double) * (size_t)reps);
    long peak = 0;
    if (!t)
        return 1;
    for (int i = 0; i <= reps; i++) { /* run 0 warms caches and wisdom */
        double t0 = now_ms();
        pid_t pid = fork();
        if (pid == 0) {
            execvp(cmd[0], cmd);
            _exit(127);
        }
        int status;
        struct rusage ru;
        if (pid < 0 || wait4(pid, &status, 0, &ru) < 0 || !WIFEXITED(status) ||
            WEXITSTATUS(status) != 0) {
            fprintf(stderr, "kw_bench: %s failed\n", cmd[0]);
            free(t);
            return 1;
        }
        if (i > 0)
            t[i - 1] = now_ms() - t0;
        if (ru.ru_maxrss > peak)
            peak = ru.ru_maxrss;
    }
    qsort(t, (size_t)reps, sizeof *t, cmp);
    double med = reps % 2 ? t[reps / 2] : 0.5 * (t[reps / 2 - 1] + t[reps / 2]);
    printf("{\"case\": \"run\", \"median_ms\": %.4f, \"min_ms\": %.4f, \"max_ms\": %.4f, "
           "\"reps\": %d, \"peak_rss_bytes\": %ld}\n",
           med, t[0], t[reps - 1], reps, peak * 1024);
    free(t);
    return 0;
}

static double median(double *t, int reps)
{
    qsort(t, (size_t)reps, sizeof *t, cmp);
    return reps % 2 ? t[reps / 2] : 0.5 * (t[reps / 2 - 1] + t[reps / 2]);
}

static float *random_traj(int ndim, size_t n, size_t m, uint64_t seed)
{
    float *k = malloc(m * (size_t)ndim * sizeof *k);
    kw_rng g;
    kw_rng_seed(&g, seed);
    for (size_t i = 0; k && i < m * (size_t)ndim; i++)
        k[i] = (float)((kw_rng_uniform(&g) - 0.5) * (double)n);
    return k;
}

static int bench_nufft(int ndim, size_t n, size_t m, double tol, int threads, int reps,
                       size_t coils)
{
    size_t dims[3] = {n, n, n}, np = 1;
    for (int i = 0; i < ndim; i++)
        np *= n;
    float *traj = random_traj(ndim, n, m, 7);
    float complex *img = kw_alloc(coils * np * sizeof *img), *img2 = kw_alloc(coils * np * sizeof *img);
    float complex *ksp = kw_alloc(coils * m * sizeof *ksp);
    double *t = malloc(sizeof(double) * (size_t)reps);
    if (!traj || !img || !img2 || !ksp || !t)
        return 1;
    kw_rng g;
    kw_rng_seed(&g, 3);
    for (size_t i = 0; i < coils * np; i++)
        img[i] = (float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g);
    for (size_t i = 0; i < coils * m; i++)
        ksp[i] = (float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g);
    kw_nufft_options o;
    kw_nufft_options_init(&o);
    o.tolerance = tol;
    o.nthreads = threads;
    o.measure = 1;
    kw_nufft_plan *p;
    double t0 = now_ms();
    if (kw_nufft_create(&p, ndim, dims, m, traj, &o)) {
        fprintf(stderr, "kw_bench: %s\n", kw_last_error());
        return 1;
    }
    double plan_ms = now_ms() - t0;
    kw_nufft_forward(p, img, ksp, coils); /* warm-up */
    for (int r = 0; r < reps; r++) {
        t0 = now_ms();
        kw_nufft_forward(p, img, ksp, coils);
        t[r] = now_ms() - t0;
    }
    double fwd = median(t, reps);
    kw_nufft_adjoint(p, ksp, img2, coils);
    for (int r = 0; r < reps; r++) {
        t0 = now_ms();
        kw_nufft_adjoint(p, ksp, img2, coils);
        t[r] = now_ms() - t0;
    }
    double adj = median(t, reps);
    /* Errors of coil 0 against the exact NDFT (double): forward on the first
     * 256 samples; adjoint at 32 pixels spread over the image. */
    size_t ms = m < 256 ? m : 256;
    float complex *ref = malloc(ms * sizeof *ref);
    t0 = now_ms();
    kw_ndft_forward(ndim, dims, ms, traj, img, ref);
    double ndft_rate = (double)ms / ((now_ms() - t0) * 1e-3); /* one coil */
    double num = 0, den = 0;
    for (size_t j = 0; j < ms; j++) {
        num += pow(cabs(ksp[j] - ref[j]), 2);
        den += pow(cabs(ref[j]), 2);
    }
    double efwd = sqrt(num / den);
    kw_nufft_forward(p, img, ksp, coils); /* ksp: forward of img again */
    num = den = 0;
    for (int q = 0; q < 32; q++) {
        size_t pix = (size_t)q * (np / 32) + np / 64;
        long idx[3] = {0, 0, 0};
        size_t rem = pix;
        for (int a = ndim - 1; a >= 0; a--) {
            idx[a] = (long)(rem % n) - (long)(n / 2);
            rem /= n;
        }
        double complex acc = 0;
        for (size_t j = 0; j < m; j++) {
            double ph = 0;
            for (int c = 0; c < ndim; c++) /* column c runs along axis ndim-1-c */
                ph += (double)traj[j * (size_t)ndim + (size_t)c] * (double)idx[ndim - 1 - c];
            acc += ksp[j] * cexp(2 * KW_PI * I * ph / (double)n);
        }
        acc /= sqrt((double)np);
        kw_nufft_adjoint(p, ksp, img2, 1);
        num += pow(cabs(img2[pix] - acc), 2);
        den += pow(cabs(acc), 2);
    }
    double eadj = sqrt(num / den);
    printf("{\"case\": \"nufft\", \"ndim\": %d, \"n\": %zu, \"samples\": %zu, \"tolerance\": %g, "
           "\"threads\": %d, \"coils\": %zu, \"plan_ms\": %.3f, \"forward_ms\": %.3f, "
           "\"adjoint_ms\": %.3f, \"forward_samples_per_s\": %.4g, \"adjoint_samples_per_s\": %.4g, "
           "\"forward_error\": %.3g, \"adjoint_error\": %.3g, \"ndft_samples_per_s\": %.4g}\n",
           ndim, n, m, tol, threads, coils, plan_ms, fwd, adj, (double)(m * coils) / (fwd * 1e-3),
           (double)(m * coils) / (adj * 1e-3), efwd, eadj, ndft_rate);
    free(ref);
    kw_nufft_destroy(p);
    free(traj);
    kw_free(img);
    kw_free(img2);
    kw_free(ksp);
    free(t);
    return 0;
}

static int bench_normal(int ndim, size_t n, size_t m, int threads, int reps, size_t coils)
{
    size_t dims[3] = {n, n, n}, np = 1, np2 = 1;
    int n2[3];
    for (int i = 0; i < ndim; i++) {
        np *= n;
        np2 *= 2 * n;
        n2[i] = (int)(2 * n);
    }
    float *traj = random_traj(ndim, n, m, 9);
    float complex *sens = kw_alloc(coils * np * sizeof *sens), *x = kw_alloc(np * sizeof *x),
                  *y = kw_alloc(np * sizeof *y), *buf = kw_alloc(np2 * sizeof *buf);
    double *t = malloc(sizeof(double) * (size_t)reps);
    if (!traj || !sens || !x || !y || !buf || !t)
        return 1;
    for (size_t i = 0; i < coils * np; i++)
        sens[i] = 1.0f / sqrtf((float)coils);
    for (size_t i = 0; i < np; i++)
        x[i] = 1.0f;
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = coils;
    o.sens = sens;
    o.nsamples = m;
    o.trajectory = traj;
    o.tolerance = 1e-3;
    o.nthreads = threads;
    o.measure = 1;
    kw_encoder *e;
    if (kw_encoder_create(&e, ndim, dims, &o)) {
        fprintf(stderr, "kw_bench: %s\n", kw_last_error());
        return 1;
    }
    kw_encoder_normal(e, x, y);
    for (int r = 0; r < reps; r++) {
        double t0 = now_ms();
        kw_encoder_normal(e, x, y);
        t[r] = now_ms() - t0;
    }
    double nt = median(t, reps);
    fftwf_plan_with_nthreads(threads);
    fftwf_plan pf = fftwf_plan_dft(ndim, n2, (fftwf_complex *)buf, (fftwf_complex *)buf,
                                   FFTW_FORWARD, FFTW_MEASURE);
    fftwf_plan pb = fftwf_plan_dft(ndim, n2, (fftwf_complex *)buf, (fftwf_complex *)buf,
                                   FFTW_BACKWARD, FFTW_MEASURE);
    for (int r = 0; r < reps; r++) {
        memset(buf, 0, np2 * sizeof *buf);
        double t0 = now_ms();
        for (size_t c = 0; c < coils; c++) {
            fftwf_execute(pf);
            fftwf_execute(pb);
        }
        t[r] = now_ms() - t0;
    }
    double ft = median(t, reps);
    printf("{\"case\": \"normal\", \"ndim\": %d, \"n\": %zu, \"samples\": %zu, \"threads\": %d, "
           "\"coils\": %zu, \"normal_ms\": %.3f, \"fft_floor_ms\": %.3f}\n",
           ndim, n, m, threads, coils, nt, ft);
    fftwf_destroy_plan(pf);
    fftwf_destroy_plan(pb);
    kw_encoder_destroy(e);
    free(traj);
    kw_free(sens);
    kw_free(x);
    kw_free(y);
    kw_free(buf);
    free(t);
    return 0;
}

/* Statistics of one series, and of the ratios a[r] / b[r]. */
static void series_json(const char *key, const double *t, int reps, int last)
{
    double *s = malloc(sizeof(double) * (size_t)reps);
    if (!s)
        return;
    memcpy(s, t, sizeof(double) * (size_t)reps);
    double med = median(s, reps);
    printf("\"%s\": {\"median\": %.5g, \"min\": %.5g, \"max\": %.5g}%s", key, med, s[0],
           s[reps - 1], last ? "" : ", ");
    free(s);
}

static void ratio_json(const char *key, const double *a, const double *b, int reps, int last)
{
    double *q = malloc(sizeof(double) * (size_t)reps);
    if (!q)
        return;
    for (int r = 0; r < reps; r++)
        q[r] = a[r] / b[r];
    series_json(key, q, reps, last);
    free(q);
}

static double median_of(const double *t, int reps)
{
    double *s = malloc(sizeof(double) * (size_t)reps);
    if (!s)
        return 0;
    memcpy(s, t, sizeof(double) * (size_t)reps);
    double m = median(s, reps);
    free(s);
    return m;
}

/* kweave's RSS against the plain batched FFTW plans, interleaved. */
static int bench_rss(const kw_array *a, int threads, int reps)
{
    int rank = a->ndim - 1;
    size_t coils = a->dims[0], n = 1;
    int ni[3];
    for (int i = 0; i < rank; i++) {
        ni[i] = (int)a->dims[i + 1];
        n *= a->dims[i + 1];
    }
    const float complex *k = a->data;
    size_t bytes = coils * n * sizeof(float complex);
    float *img = kw_alloc(n * sizeof(float));
    float complex *w = kw_alloc(bytes), *o = kw_alloc(bytes);
    double *t = malloc(sizeof(double) * 3 * (size_t)reps);
    double *u = malloc(sizeof(double) * 3 * (size_t)reps);
    if (!img || !w || !o || !t || !u)
        return 1;
    kw_rssrecon *rs;
    if (kw_rssrecon_create(&rs, rank, a->dims + 1, coils, KW_FFT_MEASURE)) {
        fprintf(stderr, "kw_bench: %s\n", kw_last_error());
        return 1;
    }
    fftwf_plan_with_nthreads(threads);
    fftwf_plan pin = fftwf_plan_many_dft(rank, ni, (int)coils, (fftwf_complex *)w, NULL, 1,
                                         (int)n, (fftwf_complex *)w, NULL, 1, (int)n,
                                         FFTW_BACKWARD, FFTW_MEASURE);
    fftwf_plan pout = fftwf_plan_many_dft(rank, ni, (int)coils, (fftwf_complex *)w, NULL, 1,
                                          (int)n, (fftwf_complex *)o, NULL, 1, (int)n,
                                          FFTW_BACKWARD, FFTW_MEASURE | FFTW_DESTROY_INPUT);
    if (!pin || !pout)
        return 1;
    for (int r = -2; r < reps; r++) { /* two rounds of warm-up */
        for (int j = 0; j < 3; j++) {
            int which = (j + (r < 0 ? 0 : r)) % 3;
            double dt, du;
            if (which == 0) {
                double t0 = now_ms(), u0 = cpu_ms();
                kw_rssrecon_execute(rs, k, img);
                du = cpu_ms() - u0;
                dt = now_ms() - t0;
            } else {
                memcpy(w, k, bytes);
                double t0 = now_ms(), u0 = cpu_ms();
                fftwf_execute(which == 1 ? pin : pout);
                du = cpu_ms() - u0;
                dt = now_ms() - t0;
            }
            if (r >= 0) {
                t[which * reps + r] = dt;
                u[which * reps + r] = du;
            }
        }
    }
    double *tk = t, *tin = t + reps, *tout = t + 2 * reps;
    int in_floor = median_of(tin, reps) <= median_of(tout, reps);
    printf("{\"case\": \"rss\", \"coils\": %zu, \"dims\": [", coils);
    for (int i = 0; i < rank; i++)
        printf("%s%d", i ? ", " : "", ni[i]);
    printf("], \"threads\": %d, \"reps\": %d, \"floor_plan\": \"%s\", ", threads, reps,
           in_floor ? "in-place" : "out-of-place, input destroyed");
    series_json("kweave_ms", tk, reps, 0);
    series_json("fftw_inplace_ms", tin, reps, 0);
    series_json("fftw_outofplace_ms", tout, reps, 0);
    series_json("floor_ms", in_floor ? tin : tout, reps, 0);
    if (threads == 1) { /* the same, in the thread's CPU time */
        int uin = median_of(u + reps, reps) <= median_of(u + 2 * reps, reps);
        series_json("kweave_cpu_ms", u, reps, 0);
        series_json("floor_cpu_ms", uin ? u + reps : u + 2 * reps, reps, 0);
        ratio_json("cpu_ratio_to_floor", u, uin ? u + reps : u + 2 * reps, reps, 0);
    }
    ratio_json("ratio_to_floor", tk, in_floor ? tin : tout, reps, 1);
    printf("}\n");
    fftwf_destroy_plan(pin);
    fftwf_destroy_plan(pout);
    kw_rssrecon_destroy(rs);
    kw_free(img);
    kw_free(w);
    kw_free(o);
    free(t);
    free(u);
    return 0;
}

/* Progress callback: the time of every iteration's report. */
typedef struct {
    double t[64];
    int n;
} stamps;

static int stamp(void *user, const kw_progress *p)
{
    stamps *s = user;
    (void)p;
    if (s->n < 64)
        s->t[s->n++] = now_ms();
    return 0;
}

static double per_iter(const stamps *s)
{
    return s->n > 1 ? (s->t[s->n - 1] - s->t[0]) / (s->n - 1) : 0;
}

/* One CG-SENSE and one FISTA iteration against two FFTs per coil. */
static int bench_iter(size_t n, size_t coils, int threads, int reps)
{
    size_t np = n * n, dims[2] = {n, n};
    int ni[2] = {(int)n, (int)n};
    float complex *sens = kw_alloc(coils * np * sizeof *sens), *x = kw_alloc(np * sizeof *x),
                  *y = kw_alloc(coils * np * sizeof *y), *w = kw_alloc(coils * np * sizeof *w);
    uint8_t *mask = malloc(np);
    double *t = malloc(sizeof(double) * 3 * (size_t)reps);
    if (!sens || !x || !y || !w || !mask || !t)
        return 1;
    kw_rng g;
    kw_rng_seed(&g, 5);
    for (size_t i = 0; i < coils * np; i++)
        sens[i] = ((float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g)) / sqrtf((float)coils);
    for (size_t i = 0; i < np; i++)
        mask[i] = (i / n) % 3 == 0 || (i / n >= n / 2 - 12 && i / n < n / 2 + 12);
    for (size_t i = 0; i < coils * np; i++)
        y[i] = mask[i % np] ? (float)kw_rng_normal(&g) + I * (float)kw_rng_normal(&g) : 0;
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = coils;
    o.sens = sens;
    o.mask = mask;
    o.nthreads = threads;
    o.measure = 1;
    kw_encoder *e;
    kw_solver *cg, *fi;
    kw_solver_options so;
    kw_solver_options_init(&so);
    so.iterations = 8;
    so.stop = 1e-30;
    if (kw_encoder_create(&e, 2, dims, &o) || kw_solver_create(&cg, e, 2, dims, &so)) {
        fprintf(stderr, "kw_bench: %s\n", kw_last_error());
        return 1;
    }
    so.reg = KW_REG_WAVELET;
    so.lambda = 1e-3;
    if (kw_solver_create(&fi, e, 2, dims, &so)) {
        fprintf(stderr, "kw_bench: %s\n", kw_last_error());
        return 1;
    }
    fftwf_plan_with_nthreads(threads);
    fftwf_plan pf = fftwf_plan_many_dft(2, ni, (int)coils, (fftwf_complex *)w, NULL, 1, (int)np,
                                        (fftwf_complex *)w, NULL, 1, (int)np, FFTW_FORWARD,
                                        FFTW_MEASURE);
    fftwf_plan pb = fftwf_plan_many_dft(2, ni, (int)coils, (fftwf_complex *)w, NULL, 1, (int)np,
                                        (fftwf_complex *)w, NULL, 1, (int)np, FFTW_BACKWARD,
                                        FFTW_MEASURE);
    if (!pf || !pb)
        return 1;
    for (int r = -1; r < reps; r++) {
        for (int j = 0; j < 3; j++) {
            int which = (j + (r < 0 ? 0 : r)) % 3;
            double dt;
            if (which == 2) {
                memcpy(w, y, coils * np * sizeof *w);
                double t0 = now_ms();
                fftwf_execute(pf);
                fftwf_execute(pb);
                dt = now_ms() - t0;
            } else {
                stamps s = {.n = 0};
                memset(x, 0, np * sizeof *x);
                kw_status st = which == 0 ? kw_cg_sense(cg, y, x, stamp, &s)
                                          : kw_fista(fi, y, x, stamp, &s);
                if (st) {
                    fprintf(stderr, "kw_bench: %s\n", kw_last_error());
                    return 1;
                }
                dt = per_iter(&s);
            }
            if (r >= 0)
                t[which * reps + r] = dt;
        }
    }
    printf("{\"case\": \"iteration\", \"n\": %zu, \"coils\": %zu, \"threads\": %d, \"reps\": %d, ",
           n, coils, threads, reps);
    series_json("cg_ms", t, reps, 0);
    series_json("fista_ms", t + reps, reps, 0);
    series_json("floor_ms", t + 2 * reps, reps, 0);
    ratio_json("cg_ratio_to_floor", t, t + 2 * reps, reps, 0);
    ratio_json("fista_ratio_to_floor", t + reps, t + 2 * reps, reps, 1);
    printf("}\n");
    fftwf_destroy_plan(pf);
    fftwf_destroy_plan(pb);
    kw_solver_destroy(cg);
    kw_solver_destroy(fi);
    kw_encoder_destroy(e);
    kw_free(sens);
    kw_free(x);
    kw_free(y);
    kw_free(w);
    free(mask);
    free(t);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc == 6 && strcmp(argv[1], "iter") == 0) {
        kw_fft_setup(atoi(argv[4]));
        return bench_iter((size_t)atol(argv[2]), (size_t)atol(argv[3]), atoi(argv[4]),
                          atoi(argv[5]));
    }
    if (argc == 9 && strcmp(argv[1], "nufft") == 0) {
        kw_fft_setup(atoi(argv[6]));
        return bench_nufft(atoi(argv[2]), (size_t)atol(argv[3]), (size_t)atol(argv[4]),
                           atof(argv[5]), atoi(argv[6]), atoi(argv[7]), (size_t)atol(argv[8]));
    }
    if (argc == 8 && strcmp(argv[1], "normal") == 0) {
        kw_fft_setup(atoi(argv[5]));
        return bench_normal(atoi(argv[2]), (size_t)atol(argv[3]), (size_t)atol(argv[4]),
                            atoi(argv[5]), atoi(argv[6]), (size_t)atol(argv[7]));
    }
    if (argc >= 4 && strcmp(argv[1], "run") == 0) {
        int reps = atoi(argv[2]);
        if (reps < 1 || reps > 1000)
            return 2;
        return run_processes(reps, argv + 3);
    }
    if (argc != 5) {
        fprintf(stderr, "usage: kw_bench rss|fft FILE THREADS REPS | iter N COILS THREADS REPS | run REPS CMD...\n");
        return 2;
    }
    const char *mode = argv[1];
    int threads = atoi(argv[3]), reps = atoi(argv[4]);
    if (threads < 1 || reps < 1 || reps > 10000)
        return 2;
    kw_array a;
    if (kw_npy_read(argv[2], &a) != KW_OK || a.dtype != KW_C64 || a.ndim < 3 || a.ndim > 4) {
        fprintf(stderr, "kw_bench: %s: need complex (coils, ny, nx) or (coils, nz, ny, nx): %s\n",
                argv[2], kw_last_error());
        return 2;
    }
    kw_fft_setup(threads);
    int rank = a.ndim - 1;
    size_t coils = a.dims[0], n = 1;
    for (int i = 0; i < rank; i++)
        n *= a.dims[i + 1];
    double *t = malloc(sizeof(double) * (size_t)reps);
    float *img = kw_alloc(n * sizeof(float));
    const float complex *k = a.data;
    int rc = 0;
    if (strcmp(mode, "rss") == 0) {
        rc = bench_rss(&a, threads, reps);
    } else if (strcmp(mode, "fft") == 0) {
        float complex *w = kw_alloc(coils * n * sizeof(float complex));
        kw_fft_plan *p;
        if (kw_fft_create(&p, rank, a.dims + 1, coils, KW_FFT_MEASURE)) {
            rc = 1;
        } else {
            for (int i = 0; i < reps; i++) {
                double t0 = now_ms();
                memcpy(w, k, coils * n * sizeof(float complex));
                kw_fft_inverse(p, w);
                for (size_t j = 0; j < n; j++) {
                    float s = 0;
                    for (size_t c = 0; c < coils; c++) {
                        float complex v = w[c * n + j];
                        s += crealf(v) * crealf(v) + cimagf(v) * cimagf(v);
                    }
                    img[j] = sqrtf(s);
                }
                t[i] = now_ms() - t0;
            }
            kw_fft_destroy(p);
            report("fft", threads, t, reps);
        }
        kw_free(w);
    } else {
        fprintf(stderr, "kw_bench: unknown mode %s\n", mode);
        rc = 2;
    }
    free(t);
    kw_free(img);
    kw_array_free(&a);
    return rc;
}
