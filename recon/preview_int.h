/* preview_int.h: the preview object's insides, shared by preview.c and
 * preview_report.c (not a public header). */
#ifndef KW_PREVIEW_INT_H
#define KW_PREVIEW_INT_H

#include "kw_phantom.h"
#include "kw_preview.h"
#include "kw_sequence.h"
#include "kw_tissue.h"

struct kw_preview {
    kw_preview_options o;
    kw_protocol prot;        /* the caller's, copied */
    kw_plan_report *rep;     /* the planner's report of it */
    kw_protocol ref;         /* the reference protocol (with o.reference) */
    kw_plan_report *ref_rep;
    /* what the scenario's acquisition resolved */
    kw_contrast con;
    double bw;               /* receiver bandwidth across the FOV (Hz) */
    long first_row;          /* EPI: first row of the train (partial Fourier) */
    double esp;              /* EPI echo spacing (s) */
    int shots;
    float *image;            /* (ny, nx) */
    const kw_tissue_values *tvals; /* the inserts' tissue values (NULL: the table's) */
    kw_preview_result res;
    int done;
};

typedef struct kw_preview_progress {
    kw_progress_fn fn;
    void *user;
} kw_preview_progress;

/* kw_preview_recon(): Cartesian k-space (ny, nx) of one channel -> the
 * image by kw_recon's fft: magnitude (float) or, with `complex_out`, the
 * complex image (kw_cfloat). */
kw_status kw_preview_recon(const kw_cfloat *ks, size_t ny, size_t nx, int complex_out, void *out);

/* kw_preview_dft(): the centered unitary DFT of an (ny, nx) image into out. */
kw_status kw_preview_dft(const kw_cfloat *img, size_t ny, size_t nx, kw_cfloat *out);

/* kw_preview_insert(): one shape of a tissue phantom imaged alone with the
 * protocol's timing (preview_psf.c). */
kw_status kw_preview_insert(const kw_preview *p, const kw_shape *shape, double shape_df,
                            const float *field, const double *times, const uint8_t *mask,
                            kw_cfloat *img, kw_cfloat *kdft);

/* kw_preview_fwhm(), kw_preview_blur(): preview_psf.c. */
double kw_preview_fwhm(const kw_cdouble *c, size_t n);
kw_status kw_preview_blur(kw_preview *p, const double *times, const uint8_t *mask,
                          kw_cfloat *buf, double *predicted, double *measured);
void kw_preview_effect_blur(const kw_preview *p, kw_preview_effect *e, double predicted,
                            double measured);

/* The edge response (preview_psf.c): the ideal band-limited edge's 10-90%
 * width and overshoot, and the measured ones; their effects (preview_report.c). */
void kw_preview_edge_ideal(double *width, double *overshoot);
kw_status kw_preview_edge(kw_preview *p, kw_cfloat *buf, double *width, double *overshoot);
void kw_preview_effect_edge(const kw_preview *p, kw_preview_effect *e, int which,
                            double predicted, double measured);

/* kw_preview_snr(): preview_snr.c; kw_preview_effect_snr(): preview_report.c. */
kw_status kw_preview_snr(kw_preview *p, double *predicted, double *measured);
void kw_preview_effect_snr(const kw_preview *p, kw_preview_effect *e, double predicted,
                           double measured);

/* kw_preview_phase_shift(): see preview.c. */
double kw_preview_phase_shift(const kw_cfloat *fa, const kw_cfloat *fb, size_t ny, size_t nx,
                              int axis);

/* The result's protocol figures, and one effect each from a measured shift. */
void kw_preview_result_head(kw_preview *p);
void kw_preview_effect_fat(const kw_preview *p, kw_preview_effect *e, double measured);
void kw_preview_effect_bump(const kw_preview *p, kw_preview_effect *e, double measured);

#endif
