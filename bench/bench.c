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

#include "kw_fft.h"
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

int main(int argc, char **argv)
{
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
