/* preview_snr.c: the SNR of the protocol relative to a reference protocol
 * (kw_preview.h, docs/preview.md), measured by pseudo-replicas.
 *
 * Noise model (thermal noise, Johnson-Nyquist: its power grows with the
 * receiver bandwidth; from memory): every acquired k-space sample gets
 * complex Gaussian noise of variance sigma0^2 x BW / averages, BW the
 * receiver bandwidth across the FOV (1/dwell); the signal of a sample is
 * the object's integral over the slab, FOV_x FOV_y dz / sqrt(nx ny) times
 * the simulator's unitary-scale sample (kw_phantom.h). In the unitary scale
 * the noise is then sigma = sigma0 sqrt(BW / averages) sqrt(nx ny) /
 * (FOV_x FOV_y dz). Unsampled rows (partial Fourier) carry none. The
 * object: the weave body alone (muscle, proton-density contrast: no decay,
 * so that only the voxel and the sampling differ between the protocols),
 * reconstructed by FFT, SNR = mean signal / pseudo-replica standard
 * deviation over the pixels within 0.4 phantom units of the centre. */
#include <math.h>
#include <string.h>

#include "kw_sequence.h"
#include "kw_simulate.h"
#include "preview_int.h"

#define ROI_RADIUS 0.4

/* sigma of the unitary-scale samples for protocol q (sigma0 = 1). */
static double noise_sigma(const kw_protocol *q, const kw_plan_report *r)
{
    double n = (double)q->matrix[0] * (double)q->matrix[1];
    return sqrt(r->basic.bandwidth_hz / (double)q->averages) * sqrt(n) /
           (q->fov_m[0] * q->fov_m[1] * q->slice_m);
}

/* SNR of protocol q by `replicas` pseudo-replicas at noise sigma x scale. */
static kw_status snr_of(const kw_preview *p, const kw_protocol *q, const kw_plan_report *rep,
                        double scale, double *snr)
{
    size_t ny = (size_t)q->matrix[1], nx = (size_t)q->matrix[0], n = ny * nx;
    kw_phantom weave, ph;
    kw_status st = kw_phantom_make(&weave, "weave");
    if (st)
        return st;
    memset(&ph, 0, sizeof ph);
    ph.ndim = 2;
    ph.tissue = 1;
    ph.nshapes = 1;
    ph.shapes[0] = weave.shapes[0]; /* the body */
    long first = q->sequence == KW_SEQ_EPI ? (long)ny - (long)rep->echo_train_length * q->shots : 0;
    kw_cfloat *k0 = kw_alloc_n(2 * n, sizeof *k0);
    float *acc = kw_alloc_n(3 * n, sizeof *acc);
    uint8_t *mask = kw_alloc_n(n, 1);
    double *sum = kw_alloc_n(2 * n, sizeof *sum);
    kw_sim *sim = NULL;
    if (!k0 || !acc || !mask || !sum) {
        st = kw_set_error(KW_ENOMEM, "preview: out of memory");
        goto done;
    }
    for (size_t i = 0; i < n; i++)
        mask[i] = (uint8_t)((long)(i / nx) >= first);
    kw_sim_options so;
    kw_sim_options_init(&so);
    so.phantom = &ph;
    so.n[0] = 1;
    so.n[1] = ny;
    so.n[2] = nx;
    so.mask = mask;
    so.contrast.seq = KW_CONTRAST_PD;
    so.contrast.b0_t = 3.0; /* PD: the table's proton density, any field */
    if ((st = kw_sim_create(&sim, &so)) || (st = kw_sim_execute(sim, k0, NULL, NULL)) ||
        (st = kw_preview_recon(k0, ny, nx, 0, acc + 2 * n)))
        goto done;
    kw_cdouble chol = noise_sigma(q, rep) * scale;
    kw_cfloat *k = k0 + n;
    float *im = acc;
    for (int r = 0; r < p->o.replicas; r++) {
        memcpy(k, k0, n * sizeof *k);
        if ((st = kw_sim_add_noise(sim, &chol, p->o.seed + (uint64_t)r, k)))
            goto done;
        for (size_t i = 0; i < n; i++)
            if (!mask[i])
                k[i] = 0;
        if ((st = kw_preview_recon(k, ny, nx, 0, im)))
            goto done;
        for (size_t i = 0; i < n; i++) {
            sum[i] += im[i];
            sum[n + i] += (double)im[i] * im[i];
        }
    }
    double sig = 0, var = 0, cnt = 0, R = p->o.replicas;
    for (size_t i = 0; i < n; i++) {
        double x = ((double)(i % nx) - (double)(nx / 2)) * 2.0 / (double)nx;
        double y = ((double)(ny / 2) - (double)(i / nx)) * 2.0 / (double)ny;
        if (hypot(x, y) > ROI_RADIUS)
            continue;
        double m = sum[i] / R;
        sig += acc[2 * n + i];
        var += (sum[n + i] - R * m * m) / (R - 1);
        cnt++;
    }
    *snr = sig / cnt / sqrt(var / cnt);
done:
    kw_sim_destroy(sim);
    kw_free(k0);
    kw_free(acc);
    kw_free(mask);
    kw_free(sum);
    return st;
}

kw_status kw_preview_snr(kw_preview *p, double *predicted, double *measured)
{
    /* one noise scale for both, chosen so that the protocol's own SNR is
     * about 25 (the magnitude's noise bias is then under 0.1%) */
    double scale = 1.0 / (25.0 * noise_sigma(&p->prot, p->rep));
    double a = 0, b = 0;
    kw_status st = snr_of(p, &p->prot, p->rep, scale, &a);
    if (!st)
        st = snr_of(p, &p->ref, p->ref_rep, scale, &b);
    if (st)
        return st;
    *measured = a / b;
    *predicted = p->rep->snr_factor / p->ref_rep->snr_factor;
    return KW_OK;
}
