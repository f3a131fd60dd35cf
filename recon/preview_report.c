/* preview_report.c: the preview's reconstruction and transform helpers, its
 * effects (prediction, tolerance, verdict) and its JSON report
 * (kw_preview.h). */
#include <math.h>
#include <string.h>

#include "json_build.h"
#include "kw_fft.h"
#include "kw_recon.h"
#include "preview_int.h"

kw_status kw_preview_recon(const kw_cfloat *ks, size_t ny, size_t nx, int complex_out, void *out)
{
    size_t dims[3] = {1, ny, nx};
    kw_recon_geometry g;
    memset(&g, 0, sizeof g);
    g.ndim = 3;
    g.dims = dims;
    kw_recon_options ro;
    kw_recon_options_init(&ro);
    ro.method = "fft";
    ro.complex_image = complex_out;
    kw_recon *r = NULL;
    kw_status st = kw_recon_create(&r, &g, &ro);
    if (!st)
        st = kw_recon_execute(r, ks, out, NULL, NULL, NULL);
    kw_recon_destroy(r);
    return st;
}

kw_status kw_preview_dft(const kw_cfloat *img, size_t ny, size_t nx, kw_cfloat *out)
{
    size_t dims[2] = {ny, nx};
    kw_fft_plan *f = NULL;
    kw_status st = kw_fft_create(&f, 2, dims, 1, KW_FFT_ESTIMATE);
    if (st)
        return st;
    memcpy(out, img, ny * nx * sizeof *out);
    st = kw_fft_forward(f, out);
    kw_fft_destroy(f);
    return st;
}

void kw_preview_result_head(kw_preview *p)
{
    kw_preview_result *r = &p->res;
    const kw_plan_report *rep = p->rep;
    int epi = p->prot.sequence == KW_SEQ_EPI;
    memset(r, 0, sizeof *r);
    r->sequence = (int)p->prot.sequence;
    r->b0_t = p->prot.b0_t;
    r->larmor_hz = rep->basic.larmor_hz;
    r->fat_water_hz = rep->fat_water_hz;
    r->bandwidth_per_pixel_hz = rep->bandwidth_per_pixel_hz;
    r->echo_spacing_s = epi ? rep->echo_spacing_s : 0;
    r->distortion_pixels_per_hz = epi ? rep->distortion_pixels_per_hz : 0;
    r->te_s = p->con.te_s;
    r->tr_s = p->con.tr_s;
    r->flip_rad = p->con.seq == KW_CONTRAST_GRE ? p->con.flip_rad : 0;
    r->bump_hz = p->o.bump_hz;
    r->feasible = rep->feasible;
    r->dims[0] = (size_t)p->prot.matrix[1];
    r->dims[1] = (size_t)p->prot.matrix[0];
    r->pixel_m[0] = p->prot.fov_m[1] / p->prot.matrix[1];
    r->pixel_m[1] = p->prot.fov_m[0] / p->prot.matrix[0];
}

static void verdict(kw_preview_effect *e, double measured)
{
    e->measured = measured;
    e->difference = measured - e->predicted;
    e->pass = fabs(e->difference) <= e->tolerance;
}

/* A shift along an axis of n pixels: the image wraps (the DFT is periodic),
 * so the registration sees it modulo n; the difference is taken so. */
static void verdict_shift(kw_preview_effect *e, double measured, size_t n)
{
    verdict(e, measured);
    e->difference = remainder(measured - e->predicted, (double)n);
    e->pass = fabs(e->difference) <= e->tolerance;
}

/* Fat resonates 3.4 ppm below water: towards earlier sample times, -x along
 * a readout, up the picture (-rows) along an EPI train. */
void kw_preview_effect_fat(const kw_preview *p, kw_preview_effect *e, double measured)
{
    int epi = p->prot.sequence == KW_SEQ_EPI;
    e->name = "fat_water_shift";
    e->axis = epi ? "y" : "x";
    e->unit = "pixels";
    e->predicted = epi ? -p->rep->chemical_shift_phase_pixels : -p->rep->chemical_shift_pixels;
    e->tolerance = p->o.fat_tolerance_px;
    e->tolerance_rule = "absolute, in pixels (shifts modulo the axis's pixels: the image wraps)";
    e->source = epi ? "3.4 ppm x Larmor x (ny x echo spacing / shots): the EPI phase-direction "
                      "displacement (Jezzard & Balaban 1995; Bernstein, King & Zhou 2004)"
                    : "3.4 ppm x Larmor / (bandwidth per pixel): the chemical-shift displacement "
                      "(Bernstein, King & Zhou 2004)";
    verdict_shift(e, measured, (size_t)p->prot.matrix[epi ? 1 : 0]);
}

/* A field of f Hz: +x along a readout, down the picture (+rows) for EPI. */
void kw_preview_effect_bump(const kw_preview *p, kw_preview_effect *e, double measured)
{
    int epi = p->prot.sequence == KW_SEQ_EPI;
    double f = p->o.bump_hz;
    e->name = "off_resonance_displacement";
    e->axis = epi ? "y" : "x";
    e->unit = "pixels";
    e->predicted = epi ? f * p->rep->distortion_pixels_per_hz
                          : f / p->rep->bandwidth_per_pixel_hz;
    e->tolerance = p->o.bump_tolerance * fabs(e->predicted);
    e->tolerance_rule = "relative, a fraction of the prediction (shifts modulo the axis's "
                        "pixels: the image wraps)";
    e->source = epi ? "field x ny x echo spacing / shots (Jezzard & Balaban 1995)"
                    : "field / (bandwidth per pixel): the readout displacement (Bernstein, King "
                      "& Zhou 2004)";
    verdict_shift(e, measured, (size_t)p->prot.matrix[epi ? 1 : 0]);
}

/* The decay's blur: the FWHM of |FT| of the decay at the planner's times. */
void kw_preview_effect_blur(const kw_preview *p, kw_preview_effect *e, double predicted,
                            double measured)
{
    int epi = p->prot.sequence == KW_SEQ_EPI;
    e->name = "t2star_blur";
    e->axis = epi ? "y" : "x";
    e->unit = "pixels";
    e->predicted = predicted;
    e->tolerance = p->o.blur_tolerance * fabs(predicted);
    e->tolerance_rule = "relative, a fraction of the predicted width";
    e->source = "FWHM of the Fourier transform of exp(-t/T2*) sampled at the planner's echo "
                "times (a symmetric exponential's is a Lorentzian of FWHM N esp / (pi T2*), "
                "from the Fourier pair exp(-a|k|) <-> 2a / (a^2 + (2 pi y / N)^2))";
    verdict(e, measured);
}

/* The edge response: which 0 the 10-90% width, 1 the overshoot. */
void kw_preview_effect_edge(const kw_preview *p, kw_preview_effect *e, int which,
                            double predicted, double measured)
{
    e->name = which ? "gibbs_overshoot" : "edge_width_10_90";
    e->axis = "x";
    e->unit = which ? "fraction" : "pixels";
    e->predicted = predicted;
    e->tolerance = which ? p->o.edge_tolerance * 0.1 : p->o.edge_tolerance * predicted;
    e->tolerance_rule = which ? "absolute, edge_tolerance x 0.1 of the jump"
                              : "relative, a fraction of the predicted width";
    e->source = which ? "the ideal band-limited edge 1/2 + Si(pi x)/pi: overshoot Si(pi)/pi - 1/2 "
                        "(the Wilbraham-Gibbs phenomenon; Hewitt & Hewitt 1979)"
                      : "the ideal band-limited edge 1/2 + Si(pi x)/pi at the protocol's pixel: "
                        "10-90% over 2 x90, Si(pi x90)/pi = 0.4";
    verdict(e, measured);
}

/* The SNR ratio: the planner's snr_factor ratio. */
void kw_preview_effect_snr(const kw_preview *p, kw_preview_effect *e, double predicted,
                           double measured)
{
    e->name = "snr_ratio";
    e->axis = "";
    e->unit = "ratio";
    e->predicted = predicted;
    e->tolerance = p->o.snr_tolerance * fabs(predicted);
    e->tolerance_rule = "relative, a fraction of the predicted ratio";
    e->source = "voxel volume x sqrt(total sampling time), protocol over reference (Edelstein "
                "et al. 1986; Haacke et al. 1999); measured by pseudo-replicas (Robson et al. "
                "2008)";
    verdict(e, measured);
}

static const char *seq_name(int s)
{
    static const char *const names[] = {"gre", "se", "epi", "radial", "spiral"};
    return s >= 0 && s <= 4 ? names[s] : "?";
}

kw_status kw_preview_report_json(const kw_preview *p, char **json)
{
    KW_FAIL_IF(!json, KW_EINVAL, "preview: NULL argument");
    *json = NULL;
    const kw_preview_result *r = p && p->done ? &p->res : NULL;
    KW_FAIL_IF(!r, KW_EINVAL, "preview: no result yet (call kw_preview_execute first)");
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return kw_set_error(KW_ENOMEM, "out of memory");
    cJSON_AddStringToObject(o, "kweave_version", KW_VERSION_STRING);
    cJSON_AddStringToObject(o, "kind", "preview");
    cJSON *pr = cJSON_AddObjectToObject(o, "protocol");
    cJSON_AddStringToObject(pr, "sequence", seq_name(r->sequence));
    cJSON_AddNumberToObject(pr, "b0_t", r->b0_t);
    cJSON_AddNumberToObject(pr, "larmor_hz", r->larmor_hz);
    cJSON_AddNumberToObject(pr, "fat_water_hz", r->fat_water_hz);
    double m[2] = {(double)r->dims[1], (double)r->dims[0]};
    double fov[2] = {p->prot.fov_m[0], p->prot.fov_m[1]};
    kw_json_add_vec(pr, "matrix", m, 2);
    kw_json_add_vec(pr, "fov_m", fov, 2);
    cJSON_AddNumberToObject(pr, "bandwidth_per_pixel_hz", r->bandwidth_per_pixel_hz);
    cJSON_AddNumberToObject(pr, "te_s", r->te_s);
    cJSON_AddNumberToObject(pr, "tr_s", r->tr_s);
    kw_json_add_number_or_null(pr, "flip_deg", r->flip_rad > 0 ? r->flip_rad * 180 / KW_PI : NAN);
    cJSON_AddNumberToObject(pr, "echo_spacing_s", r->echo_spacing_s);
    cJSON_AddNumberToObject(pr, "distortion_pixels_per_hz", r->distortion_pixels_per_hz);
    cJSON_AddBoolToObject(pr, "feasible", r->feasible);
    cJSON *sc = cJSON_AddObjectToObject(o, "scenario");
    cJSON_AddStringToObject(sc, "phantom", "weave");
    cJSON_AddNumberToObject(sc, "bump_hz", r->bump_hz);
    cJSON_AddStringToObject(sc, "registration",
                            "phase correlation of the insert imaged with and without the effect "
                            "(Kuglin & Hines 1975): mean phase step of the cross-power spectrum");
    cJSON *ef = cJSON_AddArrayToObject(o, "effects");
    for (int i = 0; ef && i < r->neffects; i++) {
        const kw_preview_effect *e = &r->effects[i];
        cJSON *j = cJSON_CreateObject();
        if (!j || !cJSON_AddItemToArray(ef, j)) {
            cJSON_Delete(j);
            break;
        }
        cJSON_AddStringToObject(j, "name", e->name);
        cJSON_AddStringToObject(j, "axis", e->axis);
        cJSON_AddStringToObject(j, "unit", e->unit);
        cJSON_AddNumberToObject(j, "predicted", e->predicted);
        cJSON_AddNumberToObject(j, "measured", e->measured);
        cJSON_AddNumberToObject(j, "difference", e->difference);
        cJSON_AddNumberToObject(j, "tolerance", e->tolerance);
        cJSON_AddStringToObject(j, "tolerance_rule", e->tolerance_rule);
        cJSON_AddStringToObject(j, "source", e->source);
        cJSON_AddStringToObject(j, "verdict", e->pass ? "pass" : "fail");
        kw_json_add_vec(j, "centre_px", e->centre_px, 2);
    }
    cJSON_AddBoolToObject(o, "all_pass", r->all_pass);
    cJSON_AddStringToObject(o, "safety_caution", KW_SAFETY_CAUTION);
    return kw_json_text(o, json);
}
