/* tv.c: total variation, its gradient operator and proximal map (kw_tv.h). */
#include "kw_tv.h"

#include <math.h>
#include <string.h>

/* axis d of the padded-to-3 shape, strides in samples */
static void shape3(int ndim, const size_t *dims, size_t *D)
{
    D[0] = D[1] = D[2] = 1;
    for (int d = 0; d < ndim; d++)
        D[3 - ndim + d] = dims[d];
}

void kw_tv_grad(int ndim, const size_t *dims, const float complex *u, float complex *g)
{
    size_t D[3];
    shape3(ndim, dims, D);
    const size_t n = D[0] * D[1] * D[2];
    const size_t st[3] = {D[1] * D[2], D[2], 1};
    for (int d = 0; d < ndim; d++) {
        const int a = 3 - ndim + d;
        float complex *gd = g + (size_t)d * n;
#pragma omp parallel for schedule(static) if (n > 65536)
        for (size_t i = 0; i < n; i++) {
            size_t c = (i / st[a]) % D[a];
            size_t j = c + 1 < D[a] ? i + st[a] : i - c * st[a];
            gd[i] = u[j] - u[i];
        }
    }
}

void kw_tv_grad_adjoint(int ndim, const size_t *dims, const float complex *g,
                        float complex *u)
{
    size_t D[3];
    shape3(ndim, dims, D);
    const size_t n = D[0] * D[1] * D[2];
    const size_t st[3] = {D[1] * D[2], D[2], 1};
#pragma omp parallel for schedule(static) if (n > 65536)
    for (size_t i = 0; i < n; i++) {
        float complex s = 0;
        for (int d = 0; d < ndim; d++) {
            const int a = 3 - ndim + d;
            const float complex *gd = g + (size_t)d * n;
            size_t c = (i / st[a]) % D[a];
            size_t j = c > 0 ? i - st[a] : i + (D[a] - 1) * st[a];
            s += gd[j] - gd[i];
        }
        u[i] = s;
    }
}

double kw_tv_value(int ndim, const size_t *dims, const float complex *u, float complex *g)
{
    kw_tv_grad(ndim, dims, u, g);
    size_t n = 1;
    for (int d = 0; d < ndim; d++)
        n *= dims[d];
    double s = 0;
    for (size_t i = 0; i < n; i++) {
        double q = 0;
        for (int d = 0; d < ndim; d++) {
            float complex v = g[(size_t)d * n + i];
            q += (double)crealf(v) * crealf(v) + (double)cimagf(v) * cimagf(v);
        }
        s += sqrt(q);
    }
    return s;
}

void kw_tv_prox(int ndim, const size_t *dims, const float complex *v, double mu,
                int iters, float complex *p, float complex *g, float complex *u)
{
    size_t n = 1;
    for (int d = 0; d < ndim; d++)
        n *= dims[d];
    if (!(mu > 0)) {
        memcpy(u, v, n * sizeof *u);
        return;
    }
    /* step 1/(mu ||D||^2), ||D||^2 <= 4 ndim */
    const float step = (float)(1.0 / (4.0 * ndim * mu));
    for (int it = 0; it < iters; it++) {
        kw_tv_grad_adjoint(ndim, dims, p, u);
        for (size_t i = 0; i < n; i++)
            u[i] = v[i] - (float)mu * u[i];
        kw_tv_grad(ndim, dims, u, g);
#pragma omp parallel for schedule(static) if (n > 65536)
        for (size_t i = 0; i < n; i++) {
            double q = 0;
            for (int d = 0; d < ndim; d++) {
                float complex t = p[(size_t)d * n + i] + step * g[(size_t)d * n + i];
                p[(size_t)d * n + i] = t;
                q += (double)crealf(t) * crealf(t) + (double)cimagf(t) * cimagf(t);
            }
            if (q > 1.0) {
                float s = (float)(1.0 / sqrt(q));
                for (int d = 0; d < ndim; d++)
                    p[(size_t)d * n + i] *= s;
            }
        }
    }
    kw_tv_grad_adjoint(ndim, dims, p, u);
    for (size_t i = 0; i < n; i++)
        u[i] = v[i] - (float)mu * u[i];
}
