/* kw_tv.h: isotropic total variation of 2-D and 3-D complex images.
 *
 * Forward differences with periodic boundaries along each axis,
 *   (D_d u)[i] = u[i + e_d] - u[i],  TV(u) = sum_i sqrt(sum_d |(D_d u)[i]|^2)
 * (Rudin, Osher & Fatemi 1992), D^H its adjoint. The proximal operator
 *   prox(v) = argmin_u 1/2 ||u - v||^2 + mu TV(u)
 * is computed by Chambolle's projection algorithm on the dual (Chambolle
 * 2004, J Math Imaging Vis 20:89), p <- P(p + D(v - mu D^H p) / (4 ndim mu)),
 * P the pixelwise projection on the unit ball, u = v - mu D^H p.
 *
 * Threads: plain functions without state; their OpenMP loops are elementwise
 * (TV's sum is serial), so results are bit-identical for any thread count
 * and any thread may call them on its own buffers.
 */
#ifndef KW_TV_H
#define KW_TV_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

/*! kw_tv_grad(): g (ndim x n) = D u, n = prod(dims) (dims C order). */
KW_API void kw_tv_grad(int ndim, const size_t *dims, const kw_cfloat *u,
                kw_cfloat *g);

/*! kw_tv_grad_adjoint(): u = D^H g (overwrites u). */
KW_API void kw_tv_grad_adjoint(int ndim, const size_t *dims, const kw_cfloat *g,
                        kw_cfloat *u);

/*! kw_tv_value(): TV(u) in double; g: ndim x n scratch. */
KW_API double kw_tv_value(int ndim, const size_t *dims, const kw_cfloat *u,
                   kw_cfloat *g);

/*! kw_tv_prox(): u = prox_{mu TV}(v) with `iters` dual steps; p (ndim x n,
 * kept between calls as a warm start, zero it before the first call) and
 * g (ndim x n) are caller scratch. u and v may not alias. */
KW_API void kw_tv_prox(int ndim, const size_t *dims, const kw_cfloat *v, double mu,
                int iters, kw_cfloat *p, kw_cfloat *g, kw_cfloat *u);

#ifdef __cplusplus
}
#endif
#endif
