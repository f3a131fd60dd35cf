/* kw_grappa.h: GRAPPA for uniformly undersampled Cartesian data, 1-D and
 * 2-D (and 3-D) acceleration. Griswold MA, Jakob PM, Heidemann RM, Nittka M,
 * Jellus V, Wang J, Kiefer B, Haase A, "Generalized autocalibrating
 * partially parallel acquisitions (GRAPPA)", MRM 47:1202-1210, 2002.
 *
 * Every missing point t = base + o (base on the sampling lattice, o a
 * nonzero offset with 0 <= o_a < R_a) is a linear combination, over all
 * coils, of the acquired points base + R b, b_a = -((K_a - 1) / 2) ..
 * K_a - 1 - (K_a - 1) / 2 (K_a source points along axis a; the readout and
 * other unaccelerated axes use R_a = 1, i.e. neighbouring points). The
 * weights of each offset o are fitted on the fully sampled autocalibration
 * block by regularised least squares:
 *   W = (A^H A + lambda' I)^-1 A^H B,  lambda' = lambda trace(A^H A) / ncols.
 * Acquired points are kept as they are.
 *
 * Threads: kw_grappa_create() sizes the per-thread source buffers for the
 * OpenMP threads at create (omp_get_max_threads()); kw_grappa_execute() never
 * runs more, whatever omp_set_num_threads() says later (sized for the threads
 * at create; never runs more). Each missing point is synthesised by one
 * thread: the result is bit-identical for any thread count. One plan per
 * thread for calibrate and execute (both write the plan's buffers). */
#ifndef KW_GRAPPA_H
#define KW_GRAPPA_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_grappa kw_grappa;

/* The plan's options: kw_grappa_options_init() fills the defaults (no
 * acceleration, lattice offset 0, an empty autocalibration block, which the
 * caller must set, kernel 1 x 2 x 5 (kweave recon's 2x5 on 2-D data
 * accelerated along y), lambda 1e-4), then set what applies. */
typedef struct kw_grappa_options {
    size_t struct_size; /* sizeof, set by kw_grappa_options_init() */
    int accel[3];      /* per axis (z, y, x) (default 1, 1, 1) */
    int offset[3];     /* lattice offset per axis (default 0, 0, 0) */
    size_t acs_lo[3];  /* autocalibration block: first point per axis */
    size_t acs_n[3];   /* and points per axis (default 0: to be set) */
    int kernel[3];     /* source points per axis (1 for an axis of length 1)
                          (default 1, 2, 5) */
    double lambda;     /* relative Tikhonov weight (>= 0; default 1e-4) */
} kw_grappa_options;

/*! kw_grappa_options_init(): the defaults above, struct_size = sizeof *o. */
KW_API void kw_grappa_options_init(kw_grappa_options *o);

/*! kw_grappa_create(): plan for nc coils on d = (nz, ny, nx): allocates the
 * calibration system and the weights. `o` is required: NULL, or a struct
 * never initialised (struct_size 0), is refused naming "options". KW_EINVAL
 * naming "acs_lines" when the block is too small for the kernel (fewer
 * fitting positions than unknowns per coil), "kernel" for a size or an
 * acceleration below 1, "lambda" for a negative weight. */
KW_API kw_status kw_grappa_create(kw_grappa **g, size_t nc, const size_t d[3],
                           const kw_grappa_options *o);

/*! kw_grappa_calibrate(): fit the weights on the block of `ksp` (nc, npix).
 * KW_ENUMERIC naming "acs_lines" when the system is singular (e.g. an empty
 * block, or lambda 0 with dependent coils). */
KW_API kw_status kw_grappa_calibrate(kw_grappa *g, const kw_cfloat *ksp);

/*! kw_grappa_execute(): `out` (nc, npix) = `ksp` with every unsampled point
 * (zero in all coils) on the lattice cells filled. Does not allocate; writes
 * the plan's scratch (hence the non-const plan). */
KW_API kw_status kw_grappa_execute(kw_grappa *g, const kw_cfloat *ksp,
                            kw_cfloat *out);

/*! kw_grappa_fit_count(), kw_grappa_unknowns(): fitting positions in the
 * block, and weights per target coil and offset (nc x sources). */
KW_API size_t kw_grappa_fit_count(const kw_grappa *g);
KW_API size_t kw_grappa_unknowns(const kw_grappa *g);

KW_API void kw_grappa_destroy(kw_grappa *g);

#ifdef __cplusplus
}
#endif
#endif /* KW_GRAPPA_H */
