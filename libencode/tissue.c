/* tissue.c: tissue table and signal equations (sources in kw_tissue.h). */
#include "kw_tissue.h"

#include <math.h>

#include "kw_phantom.h"

/* T1/T2 in seconds. WM, GM, muscle, liver, blood: Stanisz et al. 2005 MRM
 * 54:507, Table 1, 1.5 T and 3 T (recalled from memory, rounded to the ms).
 * CSF: close to free water at 37 C, T1 ~ 4.0-4.3 s, T2 ~ 2 s (recalled from
 * memory, representative). Fat (subcutaneous): T1 ~ 290 ms at 1.5 T and
 * ~ 370 ms at 3 T, T2 ~ 165/133 ms (recalled from memory, representative of
 * Gold et al. 2004 AJR 183:343). Proton densities and T2*: representative
 * values recalled from memory (no single table; T2* < T2 always). */
static const kw_tissue table[KW_TISSUE_COUNT] = {
    {"white-matter", 0.69, KW_SPECIES_WATER, {0.884, 1.084}, {0.072, 0.069}, {0.060, 0.045}},
    {"grey-matter", 0.80, KW_SPECIES_WATER, {1.124, 1.820}, {0.095, 0.099}, {0.075, 0.055}},
    {"csf", 1.00, KW_SPECIES_WATER, {4.000, 4.300}, {2.000, 2.000}, {0.400, 0.200}},
    {"muscle", 0.72, KW_SPECIES_WATER, {1.008, 1.412}, {0.044, 0.050}, {0.035, 0.028}},
    {"liver", 0.70, KW_SPECIES_WATER, {0.576, 0.812}, {0.046, 0.042}, {0.030, 0.022}},
    {"blood", 0.85, KW_SPECIES_WATER, {1.441, 1.932}, {0.290, 0.275}, {0.100, 0.060}},
    {"fat", 0.90, KW_SPECIES_FAT, {0.290, 0.370}, {0.165, 0.133}, {0.080, 0.060}},
};

const kw_tissue *kw_tissue_get(int id)
{
    if (id < 0 || id >= KW_TISSUE_COUNT)
        return NULL;
    return &table[id];
}

kw_status kw_tissue_relax(int id, double b0_t, double *t1, double *t2,
                          double *t2s)
{
    const kw_tissue *t = kw_tissue_get(id);
    KW_FAIL_IF(!t, KW_EINVAL, "tissue: unknown tissue %d", id);
    int f;
    if (fabs(b0_t - 1.5) <= 0.05)
        f = 0;
    else if (fabs(b0_t - 3.0) <= 0.05)
        f = 1;
    else
        return kw_set_error(KW_ERANGE,
                            "b0: tissue relaxation times are tabulated at 1.5 T "
                            "and 3 T only (got %g T)", b0_t);
    *t1 = t->t1[f];
    *t2 = t->t2[f];
    *t2s = t->t2s[f];
    return KW_OK;
}

kw_status kw_tissue_lookup(int id, double b0_t, const kw_tissue_values *given,
                           kw_tissue_values *out)
{
    const kw_tissue *t = kw_tissue_get(id);
    KW_FAIL_IF(!t || !out, KW_EINVAL, "tissue: unknown tissue %d", id);
    kw_tissue_values g = given ? given[id] : (kw_tissue_values){0, 0, 0, 0};
    const double v[4] = {g.pd, g.t1_s, g.t2_s, g.t2s_s};
    for (int i = 0; i < 4; i++)
        KW_FAIL_PARAM(!(v[i] >= 0) || !isfinite(v[i]), KW_EINVAL, "tissue",
                      "%s: a value is negative or not finite", t->name);
    out->pd = g.pd > 0 ? g.pd : t->pd;
    if (g.t1_s > 0 && g.t2_s > 0 && g.t2s_s > 0) {
        out->t1_s = g.t1_s;
        out->t2_s = g.t2_s;
        out->t2s_s = g.t2s_s;
    } else {
        double t1, t2, t2s;
        kw_status st = kw_tissue_relax(id, b0_t, &t1, &t2, &t2s);
        if (st)
            return kw_set_error_param(st, "b0_t", "%s needs tabulated relaxation times, which exist at "
                                "1.5 T and 3 T only (got %g T); give its T1, T2 and T2*",
                                t->name, b0_t);
        out->t1_s = g.t1_s > 0 ? g.t1_s : t1;
        out->t2_s = g.t2_s > 0 ? g.t2_s : t2;
        out->t2s_s = g.t2s_s > 0 ? g.t2s_s : t2s;
    }
    KW_FAIL_PARAM(out->t2s_s > out->t2_s * (1 + 1e-12), KW_EINVAL, "tissue",
                  "%s: T2* %g s above T2 %g s", t->name, out->t2s_s, out->t2_s);
    return KW_OK;
}

double kw_signal_steady(const kw_contrast *c, double pd, double t1)
{
    switch (c->seq) {
    case KW_CONTRAST_GRE: {
        /* Ernst & Anderson 1966: steady state of a spoiled FLASH-type sequence */
        double e1 = exp(-c->tr_s / t1);
        return pd * sin(c->flip_rad) * (1 - e1) / (1 - cos(c->flip_rad) * e1);
    }
    case KW_CONTRAST_SE:
        /* 90 at 0, 180 at TE/2, next 90 at TR, the transverse magnetisation
         * spoiled before each 90 (Bernstein, King & Zhou, Handbook of MRI
         * Pulse Sequences, 2004). Mz recovers from 0 to 1 - E(TE/2), the 180
         * inverts it, and it recovers over TR - TE/2:
         * Mz(TR) = 1 - (2 - e^(-TE/2T1)) e^(-(TR - TE/2)/T1)
         *        = 1 - 2 e^(-(TR - TE/2)/T1) + e^(-TR/T1). */
        return pd * (1 - 2 * exp(-(c->tr_s - 0.5 * c->te_s) / t1) + exp(-c->tr_s / t1));
    case KW_CONTRAST_IR: {
        /* 180 at 0, 90 at TI, 180 at TI + TE/2, next inversion at TR (the
         * same handbook): with m = Mz(TR) before each inversion, Mz(TI) =
         * 1 - (1 + m) e^(-TI/T1), and m = 1 - 2 e^(-(TR - TI - TE/2)/T1)
         * + e^(-(TR - TI)/T1) as for the spin echo above (the recovery from
         * the 90 at TI), so
         * Mz(TI) = 1 - 2 e^(-TI/T1) + 2 e^(-(TR - TE/2)/T1) - e^(-TR/T1). */
        double e_half = exp(-(c->tr_s - 0.5 * c->te_s) / t1);
        return pd * (1 - 2 * exp(-c->ti_s / t1) + 2 * e_half - exp(-c->tr_s / t1));
    }
    case KW_CONTRAST_PD:
    default:
        return pd;
    }
}

double kw_signal_decay(const kw_contrast *c, double t2, double t2s, double t)
{
    switch (c->seq) {
    case KW_CONTRAST_GRE:
        return exp(-t / t2s);
    case KW_CONTRAST_SE:
    case KW_CONTRAST_IR: {
        /* Reversible dephasing (rate 1/T2' = 1/T2* - 1/T2) is refocused at TE. */
        double r2p = 1.0 / t2s - 1.0 / t2;
        if (r2p < 0)
            r2p = 0;
        return exp(-t / t2) * exp(-fabs(t - c->te_s) * r2p);
    }
    case KW_CONTRAST_PD:
    default:
        return 1.0;
    }
}

double kw_signal_phase_time(const kw_contrast *c, double t)
{
    switch (c->seq) {
    case KW_CONTRAST_GRE:
        return t;
    case KW_CONTRAST_SE:
    case KW_CONTRAST_IR:
    case KW_CONTRAST_PD:
    default:
        return t - c->te_s;
    }
}

double kw_ernst_angle(double tr_s, double t1_s)
{
    return acos(exp(-tr_s / t1_s));
}
