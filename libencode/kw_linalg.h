/* kw_linalg.h: the small dense linear algebra kweave needs (least-squares
 * fits of coil series, field-map interpolators, SENSE unfolding, GRAPPA
 * calibration): Cholesky factorisation of Hermitian positive-definite
 * matrices in double and the matching solve. Row-major n x n. */
#ifndef KW_LINALG_H
#define KW_LINALG_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

/*! kw_chol(): A = L L^H in place (L in the lower triangle; the upper
 * triangle is left as it was). KW_ENUMERIC, with the pivot in the reason,
 * when A is not positive definite. */
KW_API kw_status kw_chol(kw_cdouble *a, size_t n);

/*! kw_chol_solve(): solve L L^H x = b in place (b becomes x), L from kw_chol. */
KW_API void kw_chol_solve(const kw_cdouble *l, size_t n, kw_cdouble *b);

#ifdef __cplusplus
}
#endif
#endif
