/* bench.c: in-process timings for `make bench` (bench/run.py drives it and
 * prints the table). Each case reads the same .npy input the peers read and
 * prints one JSON line: {"case", "threads", "median_ms", "min_ms", "max_ms"}.
 *
 *   kw_bench floor FILE THREADS REPS   bare batched FFTW plan (FFTW_MEASURE,
 *                                      out of place, unnormalised), execute only
 *   kw_bench rss   FILE THREADS REPS   kweave's fused inverse FFT + RSS
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
#include "npy.h"

static double now_ms(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
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

int main(int argc, char **argv)
{
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
        fprintf(stderr, "usage: kw_bench floor|rss|fft FILE THREADS REPS | run REPS CMD...\n");
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
    int ni[3];
    for (int i = 0; i < rank; i++) {
        ni[i] = (int)a.dims[i + 1];
        n *= a.dims[i + 1];
    }
    double *t = malloc(sizeof(double) * (size_t)reps);
    float *img = kw_alloc(n * sizeof(float));
    const float complex *k = a.data;
    int rc = 0;
    if (strcmp(mode, "floor") == 0) {
        float complex *out = kw_alloc(coils * n * sizeof(float complex));
        fftwf_plan_with_nthreads(threads);
        fftwf_plan p = fftwf_plan_many_dft(rank, ni, (int)coils, (fftwf_complex *)a.data,
                                           NULL, 1, (int)n, (fftwf_complex *)out, NULL, 1,
                                           (int)n, FFTW_BACKWARD, FFTW_MEASURE | FFTW_PRESERVE_INPUT);
        fftwf_execute(p);
        for (int r = 0; r < reps; r++) {
            double t0 = now_ms();
            fftwf_execute(p);
            t[r] = now_ms() - t0;
        }
        fftwf_destroy_plan(p);
        kw_free(out);
        report("floor", threads, t, reps);
    } else if (strcmp(mode, "rss") == 0) {
        kw_rssrecon *r;
        if (kw_rssrecon_create(&r, rank, a.dims + 1, coils, KW_FFT_MEASURE)) {
            fprintf(stderr, "kw_bench: %s\n", kw_last_error());
            rc = 1;
        } else {
            kw_rssrecon_execute(r, k, img);
            for (int i = 0; i < reps; i++) {
                double t0 = now_ms();
                kw_rssrecon_execute(r, k, img);
                t[i] = now_ms() - t0;
            }
            kw_rssrecon_destroy(r);
            report("rss", threads, t, reps);
        }
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
