/* fuzz_sidecar.c: libFuzzer target for what the verbs make of a sidecar's
 * values (issue 18: valid JSON with extreme values used to reach signed
 * overflow and float-to-int conversions). Each input is written as the JSON
 * sidecar of three small fixed arrays and handed to the verbs themselves, in
 * this process:
 *   - `kweave recon` of Cartesian k-space (2 coils, 8 x 8): sampling claims,
 *     FOV, coil maps and noise named by the sidecar, multi-slice "slices";
 *   - `kweave recon` of non-Cartesian k-space (2 coils, 64 samples): the
 *     "matrix" the image is made at, density compensation;
 *   - `kweave pattern --analyse` of a 64-sample trajectory: kind, matrix,
 *     readout samples and oversampling.
 * Each run is limited to 64 MiB (--max-memory) and must end with exit 0 or 2
 * (the documented codes for a result or bad input); never a crash, a leak, an
 * internal failure (exit 1) or undefined behaviour. */
#define _POSIX_C_SOURCE 200809L
#include <complex.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"
#include "kw_fft.h"
#include "npy.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char dir[64];
static char ksc[96], ksn[96], trj[96], out[96];

/* The folder and its files go when the process ends (replay and fuzzer). */
static void cleanup(void)
{
    const char *files[] = {ksc, ksn, trj, out};
    for (int i = 0; i < 4; i++) {
        char p[112];
        unlink(files[i]);
        snprintf(p, sizeof p, "%.*s.json", (int)(strlen(files[i]) - 4), files[i]);
        unlink(p);
    }
    rmdir(dir);
}

static int setup(void)
{
    snprintf(dir, sizeof dir, "/tmp/kw_fuzz_side_%ld", (long)getpid());
    if (mkdir(dir, 0700) != 0 && errno != EEXIST)
        return -1;
    snprintf(ksc, sizeof ksc, "%s/c.npy", dir);
    snprintf(ksn, sizeof ksn, "%s/n.npy", dir);
    snprintf(trj, sizeof trj, "%s/t.npy", dir);
    snprintf(out, sizeof out, "%s/o.npy", dir);
    atexit(cleanup);
    kw_array a;
    size_t dc[3] = {2, 8, 8}, dn[2] = {2, 64}, dt[2] = {64, 2};
    if (kw_array_alloc(&a, KW_C64, 3, dc))
        return -1;
    for (size_t i = 0; i < 128; i++)
        ((float complex *)a.data)[i] = (float)(i % 7) - 3.0f + I * (float)(i % 5);
    kw_status st = kw_npy_write(ksc, &a);
    kw_array_free(&a);
    if (st || kw_array_alloc(&a, KW_C64, 2, dn))
        return -1;
    for (size_t i = 0; i < 128; i++)
        ((float complex *)a.data)[i] = 1.0f + I * (float)(i % 3);
    st = kw_npy_write(ksn, &a);
    kw_array_free(&a);
    if (st || kw_array_alloc(&a, KW_F32, 2, dt))
        return -1;
    for (size_t s = 0; s < 64; s++) { /* 4 spokes of 16 samples through the centre */
        double ang = 3.14159265358979 * (double)(s / 16) / 4, r = (double)(s % 16) - 8;
        ((float *)a.data)[2 * s] = (float)(r * cos(ang));
        ((float *)a.data)[2 * s + 1] = (float)(r * sin(ang));
    }
    st = kw_npy_write(trj, &a);
    kw_array_free(&a);
    return st ? -1 : kw_fft_setup(1) == KW_OK ? 0 : -1;
}

static int write_side(const char *npy, const uint8_t *data, size_t size)
{
    char p[112];
    snprintf(p, sizeof p, "%.*s.json", (int)(strlen(npy) - 4), npy);
    FILE *f = fopen(p, "wb");
    if (!f)
        return -1;
    if (size)
        fwrite(data, 1, size, f);
    return fclose(f);
}

static int run(int (*verb)(int, char **), char **argv)
{
    int argc = 0;
    while (argv[argc])
        argc++;
    fflush(stdout);
    int saved = dup(STDOUT_FILENO), devnull = open("/dev/null", O_WRONLY);
    if (devnull >= 0)
        dup2(devnull, STDOUT_FILENO);
    int rc = verb(argc, argv);
    fflush(stdout);
    if (saved >= 0) {
        dup2(saved, STDOUT_FILENO);
        close(saved);
    }
    if (devnull >= 0)
        close(devnull);
    unlink(out);
    return rc;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static int ready = 0;
    if (!ready) {
        if (setup() != 0)
            return 0;
        ready = 1;
        kw_cli_quiet = 1;
    }
    if (size > (1u << 16))
        return 0;
    if (write_side(ksc, data, size) || write_side(ksn, data, size) || write_side(trj, data, size))
        return 0;
    char r[] = "recon", in[] = "--in", o[] = "--out", q[] = "--quiet", mm[] = "--max-memory",
         lim[] = "64MiB", tr[] = "--trajectory", pa[] = "pattern", an[] = "--analyse";
    char *a1[] = {r, in, ksc, o, out, q, mm, lim, NULL};
    char *a2[] = {r, in, ksn, tr, trj, o, out, q, mm, lim, NULL};
    char *a3[] = {pa, an, trj, q, mm, lim, NULL};
    int rc1 = run(kw_cmd_recon, a1), rc2 = run(kw_cmd_recon, a2), rc3 = run(kw_cmd_pattern, a3);
    if ((rc1 != 0 && rc1 != 2) || (rc2 != 0 && rc2 != 2) || (rc3 != 0 && rc3 != 2))
        __builtin_trap(); /* exit 1 is an internal failure */
    return 0;
}
