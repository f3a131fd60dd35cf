/* kw_pf.h: partial Fourier reconstruction along any axes (phase encode and
 * readout), for a batch of coils. The sampled region is the box
 * lo[a] .. hi[a] per axis; an axis is partial when the box is asymmetric
 * about k = 0 (index N/2). h_a = min(N/2 - lo, hi - N/2) is the half-width
 * of the symmetric band, from which the phase is estimated (low-resolution
 * image of the band, Hann-windowed: common practice, no source).
 *
 * Homodyne: Noll DC, Nishimura DG, Macovski A, "Homodyne detection in
 * magnetic resonance imaging", IEEE TMI 10(2):154-163, 1991:
 *   image = Re{ IFFT(H k) e^{-i phi} },  H(k) + H(-k) = 2 on every partial
 * axis; here H ramps linearly from 0 to 2 across the symmetric band and is 2
 * on the extra side (0 where nothing was sampled).
 * POCS: Haacke EM, Lindskog ED, Lin W, "A fast, iterative, partial-Fourier
 * technique capable of local phase recovery", JMR 92:126-145, 1991:
 * alternately impose the phase phi on the image and the measured samples on
 * k-space.
 * Results are complex: the homodyne image is returned as Re{...} e^{i phi}
 * so that coil combination sees each coil's phase. */
#ifndef KW_PF_H
#define KW_PF_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_pf kw_pf;

/*! kw_pf_create(): plan for `batch` images on d = (nz, ny, nx) sampled in
 * the box lo..hi: one batched FFT plan and the buffers. KW_EINVAL when no
 * axis is partial or the symmetric band is empty. */
KW_API kw_status kw_pf_create(kw_pf **p, size_t batch, const size_t d[3],
                       const size_t lo[3], const size_t hi[3]);

/*! kw_pf_homodyne(): `img` (batch, npix) from `ksp` (batch, npix). */
KW_API kw_status kw_pf_homodyne(kw_pf *p, const kw_cfloat *ksp, kw_cfloat *img);

/*! kw_pf_pocs(): at most `iters` iterations, stopping when the relative
 * change of the image falls below `stop`; *done = iterations made (may be
 * NULL). */
KW_API kw_status kw_pf_pocs(kw_pf *p, const kw_cfloat *ksp, kw_cfloat *img,
                     int iters, double stop, int *done);

/*! kw_pf_fraction(): the sampled fraction of each partial axis (1 for
 * full axes) into frac[3]. */
KW_API void kw_pf_fraction(const kw_pf *p, double frac[3]);

KW_API void kw_pf_destroy(kw_pf *p);

#ifdef __cplusplus
}
#endif
#endif /* KW_PF_H */
