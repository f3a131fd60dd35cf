/* report_names.h: one table of the names of the reports' quantities, hidden
 * (not installed, not exported): for each, the JSON key, the label the text
 * report prints and the unit the text gives it in. The JSON builders
 * (libencode/plan_json.c, recon/analysis_json.c) take their keys from here
 * and the text printers (cli/cmd_plan.c, cli/pattern_report.c) their labels,
 * so the two outputs cannot drift apart ("TPSF coherence" against
 * tpsf_incoherence, issue 17). tests/ref/test_report_names.py reads this
 * table and checks, on real runs, that each label is in the text whenever
 * its key is in the JSON.
 *
 * One line per name: X(ID, json key, text label, text unit). A key
 * printed under two labels (2-D against 3-D wording) has two lines. Only
 * header-only macros and a static inline accessor: the command and the
 * library both use it without an exported symbol. */
#ifndef KW_REPORT_NAMES_H
#define KW_REPORT_NAMES_H

/* The planner's report (kweave plan; kw_plan_report_json). */
#define KW_PLAN_REPORT_NAMES(X)                                                            \
    X(PLAN_LARMOR, "larmor_hz", "Larmor frequency", "MHz")                                 \
    X(PLAN_POLARIZATION, "polarization", "polarization", "")                               \
    X(PLAN_FOV, "fov_m", "FOV", "mm")                                                      \
    X(PLAN_MATRIX, "matrix", "matrix", "")                                                 \
    X(PLAN_PIXEL, "pixel_size_m", "pixel", "mm")                                           \
    X(PLAN_VOXEL_SIZE, "pixel_size_m", "voxel", "mm")                                      \
    X(PLAN_SLICE, "slice_m", "slice", "mm")                                                \
    X(PLAN_DELTA_K, "delta_k_per_m", "delta-k", "1/m")                                     \
    X(PLAN_K_MAX, "k_max_per_m", "k-max", "1/m")                                           \
    X(PLAN_BANDWIDTH, "bandwidth_hz", "bandwidth", "Hz")                                   \
    X(PLAN_BANDWIDTH_PIXEL, "bandwidth_per_pixel_hz", "Hz/pixel", "")                      \
    X(PLAN_DWELL, "dwell_s", "dwell", "us")                                                \
    X(PLAN_READOUT, "readout_duration_s", "readout", "ms")                                 \
    X(PLAN_READOUT_GRADIENT, "readout_gradient_T_per_m", "readout gradient", "mT/m")       \
    X(PLAN_SLICE_GRADIENT, "slice_select_gradient_T_per_m", "slice-select gradient", "mT/m") \
    X(PLAN_SLAB_GRADIENT, "slice_select_gradient_T_per_m", "slab-select gradient", "mT/m") \
    X(PLAN_TBW, "tbw", "TBW", "")                                                          \
    X(PLAN_RF_DURATION, "rf_duration_s", "RF pulse", "ms")                                 \
    X(PLAN_GMAX, "gmax_T_per_m", "gradient limit", "mT/m")                                 \
    X(PLAN_SLEW, "slew_T_per_m_per_s", "slew limit", "T/m/s")                              \
    X(PLAN_TEMPERATURE, "temperature_k", "polarization at", "K")                           \
    X(PLAN_EFFECTIVE_TE, "effective_te_s", "effective", "ms")                              \
    X(PLAN_SHIFT_PIXELS, "chemical_shift_pixels", "fat-water shift", "pixels")             \
    X(PLAN_SHIFT_MM, "chemical_shift_mm", "fat-water shift", "mm")                         \
    X(PLAN_SHIFT_PHASE_PIXELS, "chemical_shift_phase_pixels", "EPI phase direction", "pixels") \
    X(PLAN_SHIFT_PHASE_MM, "chemical_shift_phase_mm", "EPI phase direction", "mm")         \
    X(PLAN_FAT_CYCLES, "fat_water_cycles_per_readout", "cycles of phase by the end of the readout", "") \
    X(PLAN_SHOTS, "shots", "shot(s)", "")                                                  \
    X(PLAN_ECHO_TRAIN_LENGTH, "echo_train_length", "echo-train length", "")                \
    X(PLAN_ECHO_SPACING, "echo_spacing_s", "echo spacing", "ms")                           \
    X(PLAN_ECHO_TRAIN, "echo_train_duration_s", "train", "ms")                             \
    X(PLAN_PARTIAL_FOURIER, "partial_fourier", "partial Fourier", "")                      \
    X(PLAN_SPOKES, "spokes", "spokes", "")                                                 \
    X(PLAN_SPOKES_NYQUIST, "spokes_nyquist", "Nyquist", "")                                \
    X(PLAN_INTERLEAVES, "interleaves", "interleaves", "")                                  \
    X(PLAN_READOUT_INTERLEAF, "readout_per_interleave_s", "readout per interleaf", "ms")   \
    X(PLAN_SAMPLES_INTERLEAF, "samples_per_interleave", "samples each", "")                \
    X(PLAN_TE, "te_s", "TE", "ms")                                                         \
    X(PLAN_MIN_TE, "min_te_s", "minimum", "ms")                                            \
    X(PLAN_TR, "tr_s", "TR", "ms")                                                         \
    X(PLAN_MIN_TR, "min_tr_s", "minimum", "ms")                                            \
    X(PLAN_SCAN, "scan_time_s", "scan", "s")                                               \
    X(PLAN_RASTER, "raster_s", "raster", "us")                                             \
    X(PLAN_FAT_WATER, "chemical_shift_hz", "fat-water", "Hz")                              \
    X(PLAN_DISTORTION, "distortion_pixels_per_hz", "pixels per Hz off-resonance", "")      \
    X(PLAN_T2STAR_RATIO, "readout_to_t2star", "/ T2*", "")                                 \
    X(PLAN_VOXEL, "voxel_volume_m3", "voxel", "mm^3")                                      \
    X(PLAN_SAMPLING_TIME, "total_sampling_time_s", "total sampling time", "s")             \
    X(PLAN_SNR_FACTOR, "snr_factor", "SNR factor", "m^3 s^0.5")                            \
    X(PLAN_RELATIVE_SNR, "relative_snr", "relative SNR", "")                               \
    X(LOBE_SLICE_SELECT, "slice_select", "slice select", "")                               \
    X(LOBE_SLAB_SELECT, "slice_select", "slab select", "")                                 \
    X(LOBE_SLICE_REPHASER, "slice_rephaser", "slice rephaser", "")                         \
    X(LOBE_SLAB_REPHASER, "slice_rephaser", "slab rephaser+kz", "")                        \
    X(LOBE_READOUT, "readout", "readout", "")                                              \
    X(LOBE_PREPHASER, "prephaser", "prephaser", "")                                        \
    X(LOBE_PHASE_ENCODE, "phase_encode", "phase encode", "")                               \
    X(LOBE_PARTITION_ENCODE, "partition_encode", "kz encode alone", "")                    \
    X(LOBE_SPOILER, "spoiler", "spoiler", "")                                              \
    X(LOBE_CRUSHER, "crusher", "crusher", "")

/* The analysis of a sampling pattern (kweave pattern; kw_pattern_analysis_json). */
#define KW_ANALYSIS_REPORT_NAMES(X)                                                        \
    X(AN_ACCELERATION, "acceleration", "acceleration", "")                                 \
    X(AN_SAMPLED_FRACTION, "sampled_fraction", "sampled fraction", "")                     \
    X(AN_ACS_LINES, "acs_lines", "ACS lines", "")                                          \
    X(AN_ACS_BLOCK, "acs_block", "ACS block", "")                                          \
    X(AN_MAX_GAP, "max_gap_dk", "largest gap", "delta-k")                                  \
    X(AN_SPOKES, "spokes", "spokes", "")                                                   \
    X(AN_NYQUIST_SPOKES, "nyquist_spokes", "Nyquist", "")                                  \
    X(AN_READOUTS, "spokes", "readouts", "")                                               \
    X(AN_FWHM, "psf_fwhm_pixels", "PSF main lobe (FWHM)", "pixels")                        \
    X(AN_PEAK_SIDELOBE, "psf_peak_sidelobe", "peak sidelobe", "of the peak")               \
    X(AN_ENERGY_OUTSIDE, "psf_energy_outside_mainlobe", "energy outside lobe", "")         \
    X(AN_TPSF, "tpsf_incoherence", "TPSF incoherence", "")

typedef struct kw_report_name {
    const char *key;   /* the JSON key */
    const char *label; /* the text report's label */
    const char *unit;  /* the unit the text gives the value in ("" none) */
} kw_report_name;

#define KW_RN_ENUM_(id, key, label, unit) KW_RN_##id,
enum kw_report_name_id {
    KW_PLAN_REPORT_NAMES(KW_RN_ENUM_) KW_ANALYSIS_REPORT_NAMES(KW_RN_ENUM_) KW_RN_COUNT
};
#undef KW_RN_ENUM_

/* The entry of one name (id: KW_RN_PLAN_TE ...). */
static inline const kw_report_name *kw_report_name_get(enum kw_report_name_id id)
{
#define KW_RN_ROW_(id, key, label, unit) {key, label, unit},
    static const kw_report_name table[] = {
        KW_PLAN_REPORT_NAMES(KW_RN_ROW_) KW_ANALYSIS_REPORT_NAMES(KW_RN_ROW_)};
#undef KW_RN_ROW_
    return &table[id];
}

/* The key and the label of a name by its short id: RN_KEY(PLAN_TE). */
#define RN_KEY(id) (kw_report_name_get(KW_RN_##id)->key)
#define RN_LABEL(id) (kw_report_name_get(KW_RN_##id)->label)

#endif
