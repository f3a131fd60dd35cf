/* analysis_json.c: the report of a pattern analysis as JSON
 * (kw_pattern_analysis_json(); the builder `kweave pattern` writes its
 * --json reports with, analysis_json.h). */
#include "analysis_json.h"
#include "json_build.h"
#include "report_names.h"

#define add_num kw_json_add_number_or_null

static void add_psf(cJSON *o, const kw_pattern_analysis *a)
{
    add_num(o, RN_KEY(AN_FWHM), a->fwhm_main);
    cJSON *f = cJSON_AddObjectToObject(o, "psf_fwhm_pixels_by_axis");
    cJSON *lobe = cJSON_AddObjectToObject(o, "psf_mainlobe_halfwidth_pixels");
    cJSON *at = cJSON_AddObjectToObject(o, "psf_peak_sidelobe_at_pixels");
    for (int i = 0; i < a->psfrank && i < 2; i++) {
        add_num(f, a->axes[i], a->psf.fwhm[i]);
        add_num(lobe, a->axes[i], a->psf.lobe[i]);
        add_num(at, a->axes[i], (double)a->psf.sidelobe_at[i]);
    }
    add_num(o, "psf_peak", a->psf.peak);
    add_num(o, RN_KEY(AN_PEAK_SIDELOBE), a->psf.peak_sidelobe);
    add_num(o, RN_KEY(AN_ENERGY_OUTSIDE), a->psf.energy_outside);
    double pg[2] = {(double)a->psfdims[0], (double)a->psfdims[1]};
    kw_json_add_vec(o, "psf_grid", pg, 2);
    cJSON_AddStringToObject(o, "psf_method", a->cartesian ? "fft" : "ndft");
    if (!a->cartesian)
        cJSON_AddStringToObject(o, "psf_weights",
                                a->weights == KW_PATTERN_WEIGHTS_RADIAL ? "radial area (ramp)"
                                : a->weights == KW_PATTERN_WEIGHTS_PIPE ? "Pipe-Menon 1999 (iterative)"
                                                                        : "none");
}

cJSON *kw_pattern_analysis_json_build(const kw_pattern_analysis *a, const char *name,
                                      const char *kind)
{
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return NULL;
    cJSON_AddStringToObject(o, "kweave_version", KW_VERSION_STRING);
    if (name)
        cJSON_AddStringToObject(o, "file", name);
    else
        cJSON_AddNullToObject(o, "file");
    if (kind && kind[0])
        cJSON_AddStringToObject(o, "pattern_kind", kind);
    else
        cJSON_AddNullToObject(o, "pattern_kind");
    cJSON_AddStringToObject(o, "layout", a->cartesian ? "cartesian" : "noncartesian");
    cJSON *ax = cJSON_AddArrayToObject(o, "axes");
    for (int i = 0; i < 2; i++)
        cJSON_AddItemToArray(ax, cJSON_CreateString(a->axes[i]));
    double d[2] = {(double)a->dims[0], (double)a->dims[1]};
    kw_json_add_vec(o, "shape", d, 2);
    add_num(o, RN_KEY(AN_ACCELERATION), a->acceleration);
    add_num(o, RN_KEY(AN_SAMPLED_FRACTION), a->sampled_fraction);
    add_num(o, RN_KEY(AN_ACS_LINES), a->acs_lines);
    if (a->cartesian) {
        double b[2] = {(double)a->acs_block[0], (double)a->acs_block[1]};
        kw_json_add_vec(o, RN_KEY(AN_ACS_BLOCK), b, 2);
    } else {
        cJSON_AddNullToObject(o, RN_KEY(AN_ACS_BLOCK));
    }
    add_num(o, RN_KEY(AN_MAX_GAP), a->max_gap);
    if (a->cartesian && !a->plane) {
        cJSON *g = cJSON_AddObjectToObject(o, "max_gap_dk_by_axis");
        for (int i = 0; i < 2; i++)
            add_num(g, a->axes[i], a->gap_axis[i]);
    }
    add_psf(o, a);
    add_num(o, RN_KEY(AN_TPSF), a->tpsf_max);
    if (a->tpsf_levels) {
        cJSON_AddStringToObject(o, "tpsf_wavelet", "db4");
        kw_json_add_vec(o, "tpsf_by_level", a->tpsf, a->tpsf_levels);
    } else {
        cJSON_AddNullToObject(o, "tpsf_wavelet");
        cJSON_AddNullToObject(o, "tpsf_by_level");
    }
    if (!a->cartesian) {
        add_num(o, RN_KEY(AN_SPOKES), (double)a->spokes);
        add_num(o, RN_KEY(AN_NYQUIST_SPOKES), a->nyquist_spokes);
    }
    return o;
}

kw_status kw_pattern_analysis_json(const kw_pattern_analysis *a, const char *name,
                                   const char *kind, char **json)
{
    KW_FAIL_PARAM(!json, KW_EINVAL, "json", "NULL output pointer");
    *json = NULL;
    KW_FAIL_IF(!a, KW_EINVAL, "pattern analysis: NULL argument");
    KW_FAIL_IF(!a->axes[0] || !a->axes[1] || !a->psfbuf, KW_EINVAL,
               "pattern analysis: not analysed (kw_pattern_analyse_mask or _trajectory first)");
    return kw_json_text(kw_pattern_analysis_json_build(a, name, kind), json);
}
