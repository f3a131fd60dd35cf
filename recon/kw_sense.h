/* kw_sense.h: SENSE for uniformly undersampled Cartesian data, 1-D and 2-D
 * (and 3-D) acceleration, with optional Tikhonov regularisation and the
 * analytic g-factor. Pruessmann KP, Weiger M, Scheidegger MB, Boesiger P,
 * "SENSE: sensitivity encoding for fast MRI", MRM 42:952-962, 1999.
 *
 * Data: k-space (nc, nz, ny, nx), whitened (kw_combine.h); only the points
 * of the lattice offset[a] + accel[a] j are used (extra autocalibration
 * lines are ignored). N_a must be divisible by accel[a].
 *
 * With the centered unitary DFT, keeping the lattice and zero-filling folds
 * the coil image c as  a_c(n) = sum_l (1/R) w^-l S_c(n + l N/R) rho(n + l N/R),
 * w = exp(2 pi i (offset - N/2) / R) per axis (derived from the DFT in
 * sense.c; checked against brute force in tests/test_sense.c). At every
 * folded pixel the unknowns rho solve (E^H E + lambda' I) rho = E^H a with
 * lambda' = lambda trace(E^H E) / (number of unknowns). The g-factor is
 * g_l = sqrt([(E^H E)^-1]_ll [E^H E]_ll) (Pruessmann 1999, eq. 23), and with
 * lambda > 0 its regularised form sqrt([X]_ll [E^H E]_ll),
 * X = (A + lambda' I)^-1 A (A + lambda' I)^-1, A = E^H E.
 * Unknowns whose sensitivities are all zero are left out (rho = 0, g = 0).
 *
 * Threads: kw_sense_create() sizes the per-thread scratch for the OpenMP
 * threads at create (omp_get_max_threads()); kw_sense_execute() never runs
 * more, whatever omp_set_num_threads() says later (sized for the threads at
 * create; never runs more). Each folded pixel is solved by one thread, so the
 * result is bit-identical for any thread count. One plan per thread for
 * execute (the plan's buffers are written). */
#ifndef KW_SENSE_H
#define KW_SENSE_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_sense kw_sense;

#define KW_SENSE_MAX_R 64

/* The plan's options: kw_sense_options_init() fills the defaults (no
 * acceleration, lattice offset 0, lambda 0), then set what applies. */
typedef struct kw_sense_options {
    size_t struct_size; /* sizeof, set by kw_sense_options_init() */
    int accel[3];       /* acceleration per axis (z, y, x) (default 1, 1, 1) */
    int offset[3];      /* lattice offset per axis (default 0, 0, 0) */
    double lambda;      /* relative Tikhonov weight, >= 0 (default 0) */
} kw_sense_options;

/*! kw_sense_options_init(): the defaults above, struct_size = sizeof *o. */
KW_API void kw_sense_options_init(kw_sense_options *o);

/*! kw_sense_create(): plan SENSE for nc coils on the grid d = (nz, ny, nx)
 * (nz = 1 for 2-D) with the acceleration, lattice offset and relative
 * Tikhonov weight of `o` (required: NULL, or a struct never initialised,
 * struct_size 0, is refused naming "options"). Makes the FFT plan and every
 * buffer. KW_EINVAL naming "accel" when an axis is not divisible by its
 * acceleration, or the total acceleration exceeds KW_SENSE_MAX_R or the coil
 * count; naming "lambda" for a negative weight. */
KW_API kw_status kw_sense_create(kw_sense **s, size_t nc, const size_t d[3],
                          const kw_sense_options *o);

/*! kw_sense_execute(): unfold `ksp` (nc, npix) with the sensitivities `sens`
 * (nc, npix) into `img` (npix, complex, in the intensity scale of sens);
 * `gfactor` (npix floats) may be NULL. Does not allocate. KW_ENUMERIC naming
 * "lambda" (kw_last_error_param()) when a pixel's system is singular
 * (lambda = 0 and dependent sensitivities). */
KW_API kw_status kw_sense_execute(kw_sense *s, const kw_cfloat *ksp,
                           const kw_cfloat *sens, kw_cfloat *img,
                           float *gfactor);

/*! kw_sense_destroy(): free (NULL-safe). */
KW_API void kw_sense_destroy(kw_sense *s);

#ifdef __cplusplus
}
#endif
#endif /* KW_SENSE_H */
