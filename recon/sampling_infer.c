/* sampling_infer.c: the Cartesian sampling the data show (acceleration per
 * axis, calibration block, partial Fourier: kw_cart_sampling_analyse in
 * coilsens.c) checked against what the caller states (kw_recon_sampling,
 * e.g. from an acquisition's sidecar). */
#include <math.h>

#include "recon_priv.h"

kw_status kw_recon_check_claims(const kw_recon_sampling *s, const kw_cart_sampling *smp)
{
    int Rd = smp->accel[0] * smp->accel[1] * smp->accel[2];
    int Rs = (int)s->acceleration;
    /* Only a uniform lattice has an R the data can confirm; for random,
     * Poisson-disc or lattice-shifted patterns the stated acceleration is
     * the nominal (or achieved) ratio and cannot contradict the data. Writers
     * give either the lattice R or the effective one (1 / sampled fraction,
     * lower with calibration lines): both agree with the data. */
    double reff = smp->fraction > 0 ? 1.0 / smp->fraction : 0;
    int agrees = Rs == Rd ||
                 (!s->acceleration_per_axis && fabs(s->acceleration - reff) <= 0.05 * reff);
    KW_FAIL_PARAM(Rs > 1 && smp->uniform && !agrees, KW_EINVAL, "acceleration",
                  "stated %g but the data are sampled at R = %d (effective %.2f)",
                  s->acceleration, Rd, reff);
    if (s->acs_lines > 0 && Rd > 1) {
        int found = 0;
        for (int a = 0; a < 3; a++)
            if (smp->accel[a] > 1)
                found = (int)smp->acs_n[a];
        /* the block found may include a neighbouring lattice line */
        KW_FAIL_PARAM(s->acs_lines > found, KW_EINVAL, "acs_lines",
                      "stated %d but the data hold only %d", s->acs_lines, found);
    }
    return KW_OK;
}
