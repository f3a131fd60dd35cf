/* kw_tissue.h: tissue properties (proton density, T1, T2, T2*, chemical
 * species) at 1.5 T and 3 T, and the signal equations that turn them into
 * image contrast for a given sequence timing.
 *
 * Sources (cited again beside each number in tissue.c):
 *  - T1 and T2 of white matter, grey matter, muscle, liver and blood:
 *    Stanisz G.J. et al., "T1, T2 relaxation and magnetization transfer in
 *    tissue at 3T", Magn Reson Med 54:507-512 (2005), Table 1 (1.5 T and 3 T
 *    columns; recalled from memory, rounded to the ms).
 *  - CSF and fat, proton densities and T2*: representative literature values
 *    recalled from memory (marked so in tissue.c); not from one table.
 * Signal equations: spoiled gradient echo (Ernst 1966 steady state), spin
 * echo and inversion recovery with the refocusing pulse (Bernstein, King &
 * Zhou 2004, "Handbook of MRI Pulse Sequences"; the short forms in Haacke
 * et al. 1999, "Magnetic Resonance Imaging: Physical Principles and
 * Sequence Design", are their TE << TR limits).
 */
#ifndef KW_TISSUE_H
#define KW_TISSUE_H

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef enum kw_tissue_id {
    KW_TISSUE_WHITE_MATTER = 0,
    KW_TISSUE_GREY_MATTER,
    KW_TISSUE_CSF,
    KW_TISSUE_MUSCLE,
    KW_TISSUE_LIVER,
    KW_TISSUE_BLOOD,
    KW_TISSUE_FAT,
    KW_TISSUE_COUNT
} kw_tissue_id;

typedef struct kw_tissue {
    const char *name;
    double pd;          /* relative proton density (water = 1) */
    int species;        /* KW_SPECIES_WATER or KW_SPECIES_FAT (kw_phantom.h) */
    double t1[2], t2[2], t2s[2]; /* seconds at [0] = 1.5 T, [1] = 3 T */
} kw_tissue;

/* Chemical shift of the main (methylene) fat peak relative to water: -3.4 ppm
 * (fat resonates below water; common practice, e.g. Hamilton et al. 2011
 * NMR Biomed 24:784, 1.3 ppm vs 4.7 ppm; recalled from memory). */
#define KW_FAT_SHIFT_PPM (-3.4)

typedef enum kw_contrast_kind {
    KW_CONTRAST_PD = 0,  /* no sequence: the proton density itself */
    KW_CONTRAST_GRE = 1, /* spoiled gradient echo (Ernst) */
    KW_CONTRAST_SE = 2,  /* spin echo */
    KW_CONTRAST_IR = 3   /* inversion recovery with a spin-echo readout */
} kw_contrast_kind;

typedef struct kw_contrast {
    kw_contrast_kind seq;
    double b0_t;    /* 1.5 or 3 (tissue values are tabulated there only) */
    double te_s, tr_s, ti_s;
    double flip_rad;
} kw_contrast;

/*! kw_tissue_get(): the table entry of `id` (NULL if out of range). */
KW_API const kw_tissue *kw_tissue_get(int id);

/*! kw_tissue_relax(): T1, T2, T2* (s) of tissue `id` at b0_t (1.5 or 3 T,
 * within 0.05 T); KW_ERANGE for another field strength. */
KW_API kw_status kw_tissue_relax(int id, double b0_t, double *t1, double *t2,
                          double *t2s);

/* Tissue values a caller gives instead of the table's (one per table entry,
 * KW_TISSUE_COUNT of them): each field > 0 replaces the table's value, at
 * any field strength; 0 keeps the table's. */
typedef struct kw_tissue_values {
    double pd, t1_s, t2_s, t2s_s;
} kw_tissue_values;

/*! kw_tissue_lookup(): proton density, T1, T2, T2* of tissue `id` at b0_t:
 * the caller's values `given` (NULL: none) where set, the table's elsewhere.
 * KW_ERANGE when a table value is needed at a field other than 1.5 or 3 T;
 * KW_EINVAL for T2* above T2 or a value that is not finite and positive. */
KW_API kw_status kw_tissue_lookup(int id, double b0_t, const kw_tissue_values *given,
                           kw_tissue_values *out);

/*! kw_signal_steady(): the magnitude of the transverse magnetisation right
 * after excitation (relative to the proton density scale 1), i.e. the signal
 * equation without the echo-time decay:
 *   PD:  pd
 *   GRE: pd sin(a) (1 - E1) / (1 - cos(a) E1),  E1 = exp(-TR/T1)   (Ernst)
 *   SE:  pd (1 - 2 exp(-(TR - TE/2)/T1) + exp(-TR/T1))
 *   IR:  pd (1 - 2 exp(-TI/T1) + 2 exp(-(TR - TE/2)/T1) - exp(-TR/T1))
 * the full forms with the refocusing pulse at TE/2 after the 90 (Bernstein,
 * King & Zhou, "Handbook of MRI Pulse Sequences", 2004; derived in
 * tissue.c); TR runs from excitation (SE) or inversion (IR) to the next,
 * the transverse magnetisation is spoiled before each. With TE << TR they
 * reduce to pd (1 - exp(-TR/T1)) and pd (1 - 2 exp(-TI/T1) + exp(-TR/T1)).
 * IR returns the signed value (negative before the null) so that a
 * phase-sensitive reconstruction shows it; magnitude images take |.|. */
KW_API double kw_signal_steady(const kw_contrast *c, double pd, double t1);

/*! kw_signal_decay(): the relaxation factor at time t after excitation:
 *   GRE: exp(-t/T2*)
 *   SE, IR: exp(-t/T2) exp(-|t - TE| (1/T2* - 1/T2))  (refocused at TE)
 *   PD: 1.
 * At t = TE this gives the textbook exp(-TE/T2*) or exp(-TE/T2). */
KW_API double kw_signal_decay(const kw_contrast *c, double t2, double t2s, double t);

/*! kw_signal_phase_time(): the time over which off-resonance accrues phase
 * at sample time t: t for GRE; t - TE for spin echoes and for PD (an ideal
 * echo at TE, as if refocused). */
KW_API double kw_signal_phase_time(const kw_contrast *c, double t);

/*! kw_ernst_angle(): arccos(exp(-TR/T1)) in radians. */
KW_API double kw_ernst_angle(double tr_s, double t1_s);

#ifdef __cplusplus
}
#endif
#endif /* KW_TISSUE_H */
