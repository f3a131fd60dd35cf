/* test_memory.c: the process's allocation budget (kw_alloc, kw_free,
 * kw_memory_set_limit; libencode/kw_base.h).
 *
 * Outside reference: the budget's own contract. Every object kind of the
 * library is made, run and destroyed (1) without a limit: the bytes held
 * through kw_alloc come back to what they were before, which shows that
 * every kw_alloc of the object is released by a kw_free (a block released
 * with free() would stay counted; a malloc'd block given to kw_free would
 * take the count below its start); (2) under limits from nothing up to what
 * the unlimited run held at most: every run either succeeds or fails with
 * KW_ENOMEM after a refusal of the budget, and holds nothing afterwards
 * (the error paths of every allocation the sweep reaches free what was
 * taken). Run under valgrind and ASan for the crashes and leaks outside the
 * count. Sizes are small (16..32 pixels) so that the sweeps stay fast. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "kw_acquire.h"
#include "kw_base.h"
#include "kw_dcf.h"
#include "kw_encoder.h"
#include "kw_fft.h"
#include "kw_nufft.h"
#include "kw_pattern.h"
#include "kw_pattern_analysis.h"
#include "kw_recon.h"

/* ---- the budget itself ------------------------------------------------------------- */

Test(memory, budget_counts_refuses_and_returns)
{
    kw_memory_set_limit(0);
    size_t base = kw_memory_in_use(), r0 = kw_memory_refusals(NULL, NULL);
    void *a = kw_alloc(1000);
    cr_assert_not_null(a);
    cr_expect_eq((uintptr_t)a % 64, 0u);
    cr_expect_geq(kw_memory_in_use(), base + 1000);
    cr_expect_geq(kw_memory_peak(), kw_memory_in_use());

    kw_memory_set_limit(kw_memory_in_use() + 4096);
    cr_expect_eq(kw_memory_limit(), kw_memory_in_use() + 4096);
    size_t held = kw_memory_in_use();
    cr_expect_null(kw_alloc(8192));
    cr_expect(kw_alloc_refused_by_limit());
    size_t asked = 0, at = 0;
    cr_expect_eq(kw_memory_refusals(&asked, &at), r0 + 1);
    cr_expect_eq(asked, 8192u);
    cr_expect_eq(at, held);
    cr_expect_eq(kw_memory_in_use(), held, "a refusal holds nothing");

    void *b = kw_alloc(1024); /* within the room left */
    cr_expect_not_null(b);
    cr_expect(!kw_alloc_refused_by_limit());
    kw_free(b);
    kw_free(a);
    kw_memory_set_limit(0);
    cr_expect_eq(kw_memory_in_use(), base);
    cr_expect_eq(kw_memory_refusals(NULL, NULL), r0 + 1);
}

Test(memory, alloc_n_is_calloc_with_overflow_check)
{
    kw_memory_set_limit(0);
    size_t base = kw_memory_in_use(), r0 = kw_memory_refusals(NULL, NULL);
    unsigned char *p = kw_alloc_n(100, 3);
    cr_assert_not_null(p);
    for (int i = 0; i < 300; i++)
        cr_expect_eq(p[i], 0);
    kw_free(p);
    void *z = kw_alloc_n(0, 8); /* like calloc(0, 8): a block, not a failure */
    cr_expect_not_null(z);
    kw_free(z);
    cr_expect_null(kw_alloc_n(SIZE_MAX / 2, 3));
    cr_expect(!kw_alloc_refused_by_limit(), "an overflow is not the budget's refusal");
    cr_expect_null(kw_alloc(0));
    kw_free(NULL);
    cr_expect_eq(kw_memory_in_use(), base);
    cr_expect_eq(kw_memory_refusals(NULL, NULL), r0);
}

Test(memory, array_alloc_names_memory_when_refused)
{
    kw_memory_set_limit(kw_memory_in_use() + 1024);
    kw_array a;
    size_t dims[2] = {64, 64};
    kw_clear_error();
    cr_expect_eq(kw_array_alloc(&a, KW_C64, 2, dims), KW_ENOMEM);
    cr_expect_str_eq(kw_last_error_param(), "memory");
    kw_memory_set_limit(0);
    cr_expect_eq(kw_array_alloc(&a, KW_C64, 2, dims), KW_OK);
    kw_array_free(&a);
}

Test(memory, reset_peak_starts_a_new_measure)
{
    kw_memory_set_limit(0);
    void *a = kw_alloc(1 << 20);
    kw_free(a);
    kw_memory_reset_peak();
    cr_expect_eq(kw_memory_peak(), kw_memory_in_use());
}

/* ---- every object kind: balanced, and clean under every limit ------------------- */

#define N 32
#define NC 4

static kw_cfloat ksp[NC * N * N], maps[NC * N * N];
static uint8_t mask[N * N];
static float *traj; /* radial trajectory (ns, 2) */
static size_t ns;
static kw_cfloat *nks; /* (NC, ns) */

/* Cartesian 4-coil k-space of Shepp-Logan at R = 2 with 8 ACS lines, its
 * maps, and a radial case; made once, outside the measured runs. */
static void setup(void)
{
    kw_memory_set_limit(0);
    kw_pattern_options po;
    kw_pattern_options_init(&po);
    po.kind = KW_PATTERN_UNIFORM;
    po.dims[0] = po.dims[1] = N;
    po.accel[0] = 2;
    po.accel[1] = 1;
    po.acs[0] = 8;
    kw_pattern *p;
    cr_assert_eq(kw_pattern_create(&p, &po), KW_OK, "%s", kw_last_error());
    memcpy(mask, kw_pattern_mask(p), sizeof mask);
    kw_pattern_destroy(p);

    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    o.phantom = "shepp-logan";
    o.dims[1] = o.dims[2] = N;
    o.fov_m[2] = 0.24;
    o.coils = NC;
    o.mask = mask;
    o.mask_ndim = 2;
    o.mask_dims[0] = o.mask_dims[1] = N;
    kw_acquisition *a;
    cr_assert_eq(kw_acquisition_create(&a, &o), KW_OK, "%s", kw_last_error());
    cr_assert_eq(kw_acquisition_execute(a, ksp, NULL, maps, NULL, NULL), KW_OK, "%s",
                 kw_last_error());
    kw_acquisition_destroy(a);

    po.kind = KW_PATTERN_RADIAL;
    po.accel[0] = 0;
    po.acs[0] = 0;
    po.spokes = 24;
    cr_assert_eq(kw_pattern_create(&p, &po), KW_OK, "%s", kw_last_error());
    ns = kw_pattern_info_of(p)->shape[0];
    traj = malloc(ns * 2 * sizeof *traj);
    memcpy(traj, kw_pattern_trajectory(p), ns * 2 * sizeof *traj);
    kw_pattern_destroy(p);
    o.mask = NULL;
    o.mask_ndim = 0;
    o.traj = traj;
    o.traj_dims[0] = ns;
    o.traj_dims[1] = 2;
    cr_assert_eq(kw_acquisition_create(&a, &o), KW_OK, "%s", kw_last_error());
    nks = malloc(kw_acquisition_kspace_count(a) * sizeof *nks);
    cr_assert_eq(kw_acquisition_execute(a, nks, NULL, NULL, NULL, NULL), KW_OK, "%s",
                 kw_last_error());
    kw_acquisition_destroy(a);
}

static void teardown(void)
{
    free(traj);
    free(nks);
    kw_memory_set_limit(0);
}

/* The same status after a cleanup: the first failure of a run. */
#define TRY(call)                                                                          \
    do {                                                                                   \
        if (!st)                                                                           \
            st = (call);                                                                   \
    } while (0)

static kw_status run_fft(void)
{
    kw_fft_plan *p = NULL;
    size_t d[2] = {N, N};
    static kw_cfloat x[2 * N * N];
    kw_status st = kw_fft_create(&p, 2, d, 2, 0);
    TRY(kw_fft_forward(p, x));
    TRY(kw_fft_inverse(p, x));
    kw_fft_destroy(p);
    return st;
}

static kw_status run_nufft(void)
{
    kw_nufft_plan *p = NULL;
    size_t d[2] = {N, N};
    static kw_cfloat img[N * N], y[NC * 4096];
    cr_assert_leq(ns, 4096u);
    kw_status st = kw_nufft_create(&p, 2, d, ns, traj, NULL);
    TRY(kw_nufft_forward(p, img, y, 1));
    TRY(kw_nufft_adjoint(p, y, img, 1));
    kw_nufft_destroy(p);
    return st;
}

static kw_status run_encoder(int noncart)
{
    kw_encoder_options o;
    kw_encoder_options_init(&o);
    o.ncoils = NC;
    o.sens = maps;
    if (noncart) {
        o.nsamples = ns;
        o.trajectory = traj;
    } else {
        o.mask = mask;
    }
    size_t d[2] = {N, N};
    static kw_cfloat x[N * N], out[N * N], y[NC * 4096];
    kw_encoder *e = NULL;
    kw_status st = kw_encoder_create(&e, 2, d, &o);
    TRY(kw_encoder_forward(e, x, y));
    TRY(kw_encoder_adjoint(e, y, x));
    TRY(kw_encoder_normal(e, x, out));
    kw_encoder_destroy(e);
    return st;
}
static kw_status run_encoder_cart(void) { return run_encoder(0); }
static kw_status run_encoder_noncart(void) { return run_encoder(1); }

static kw_status run_acquisition(void)
{
    kw_acquisition_options o;
    kw_acquisition_options_init(&o);
    o.phantom = "shepp-logan";
    o.dims[1] = o.dims[2] = 16;
    o.fov_m[2] = 0.24;
    o.coils = 2;
    o.snr = 20;
    static kw_cfloat k[2 * 16 * 16], m[2 * 16 * 16];
    static float t[16 * 16];
    kw_acquisition *a = NULL;
    kw_status st = kw_acquisition_create(&a, &o);
    TRY(kw_acquisition_execute(a, k, t, m, NULL, NULL));
    char *json = NULL;
    TRY(kw_acquisition_info_json(a, &json));
    kw_free(json);
    kw_acquisition_destroy(a);
    return st;
}

static kw_status run_pattern(kw_pattern_kind kind)
{
    kw_pattern_options po;
    kw_pattern_options_init(&po);
    po.kind = kind;
    po.dims[0] = po.dims[1] = N;
    if (kind == KW_PATTERN_POISSON) {
        po.accel[0] = 2;
        po.accel[1] = 1;
        po.acs[0] = 6;
    }
    kw_pattern *p = NULL;
    kw_status st = kw_pattern_create(&p, &po);
    char *json = NULL;
    TRY(kw_pattern_info_json(p, &json));
    kw_free(json);
    kw_pattern_destroy(p);
    return st;
}
static kw_status run_pattern_poisson(void) { return run_pattern(KW_PATTERN_POISSON); }
static kw_status run_pattern_spiral(void) { return run_pattern(KW_PATTERN_SPIRAL); }

static kw_status run_analysis_mask(void)
{
    static float w[N * N];
    for (int i = 0; i < N * N; i++)
        w[i] = mask[i];
    kw_pattern_analysis a;
    memset(&a, 0, sizeof a);
    kw_status st = kw_pattern_analyse_mask(&a, w, N, N, 0);
    char *json = NULL;
    TRY(kw_pattern_analysis_json(&a, "m", "uniform", &json));
    kw_free(json);
    kw_pattern_analysis_free(&a);
    return st;
}

static kw_status run_analysis_traj(void)
{
    kw_pattern_traj_desc d;
    memset(&d, 0, sizeof d);
    d.n = N;
    d.readout = N;
    d.radial = 1;
    d.weights = KW_PATTERN_WEIGHTS_PIPE;
    d.oversampling = 1;
    d.psf_size = 16;
    kw_pattern_analysis a;
    memset(&a, 0, sizeof a);
    kw_status st = kw_pattern_analyse_trajectory(&a, traj, ns, 2, &d, NULL, NULL);
    kw_pattern_analysis_free(&a);
    return st;
}

static kw_status run_dcf(void)
{
    static float w[4096];
    size_t d[2] = {N, N};
    kw_status st = kw_dcf_pipe(2, d, ns, traj, 5, NULL, w);
    TRY(kw_dcf_radial(2, ns, traj, w));
    return st;
}

/* kw_recon by `method` (NULL: the default), with the maps or without
 * (estimated where the method needs them), on the Cartesian or radial case. */
static kw_status run_recon(const char *method, int with_maps, int noncart, int gfactor)
{
    size_t kd[3] = {NC, N, N}, nd[2] = {NC, ns};
    kw_recon_geometry g;
    memset(&g, 0, sizeof g);
    if (noncart) {
        g.ndim = 2;
        g.dims = nd;
        g.trajectory = traj;
        g.traj_ndim = 2;
    } else {
        g.ndim = 3;
        g.dims = kd;
    }
    if (with_maps) {
        g.sens = maps;
        g.sens_ndim = 3;
        g.sens_dims = kd;
    }
    kw_recon_options o;
    kw_recon_options_init(&o);
    o.method = method;
    o.iterations = 4;
    o.want_gfactor = gfactor;
    o.replicas = gfactor ? 2 : 0;
    kw_recon *r = NULL;
    kw_status st = kw_recon_create(&r, &g, &o);
    static kw_cfloat img[4 * N * N];
    static float gf[4 * N * N];
    TRY(kw_recon_execute(r, noncart ? nks : ksp, img, gfactor ? gf : NULL, NULL, NULL));
    char *json = NULL;
    TRY(kw_recon_report_json(r, &json));
    kw_free(json);
    kw_recon_destroy(r);
    return st;
}
static kw_status run_recon_fft(void) { return run_recon("fft", 0, 0, 0); }
static kw_status run_recon_sense(void) { return run_recon("sense", 1, 0, 1); }
static kw_status run_recon_sense_estimated(void) { return run_recon("sense", 0, 0, 0); }
static kw_status run_recon_cg_sense(void) { return run_recon("cg-sense", 1, 0, 0); }
static kw_status run_recon_cs_wavelet(void) { return run_recon("cs-wavelet", 1, 0, 0); }
static kw_status run_recon_grappa(void) { return run_recon("grappa", 0, 0, 1); }
static kw_status run_recon_grid(void) { return run_recon("grid", 0, 1, 0); }
static kw_status run_recon_cg_sense_radial(void) { return run_recon("cg-sense", 1, 1, 0); }

/* Unlimited: succeeds and comes back to the bytes held before. Then under
 * `steps` limits from 0 to the run's peak: OK or KW_ENOMEM after a refusal,
 * never anything held afterwards; at no room at all, KW_ENOMEM. */
static void check_object(const char *name, kw_status (*run)(void))
{
    kw_memory_set_limit(0);
    size_t base = kw_memory_in_use();
    kw_memory_reset_peak();
    kw_status st = run();
    cr_assert_eq(st, KW_OK, "%s: %s", name, kw_last_error());
    cr_assert_eq(kw_memory_in_use(), base, "%s: %zd bytes left held", name,
                 (ssize_t)(kw_memory_in_use() - base));
    size_t need = kw_memory_peak() - base;
    cr_assert_gt(need, 0u, "%s: allocates nothing through kw_alloc", name);
    enum { STEPS = 48 };
    int refused = 0;
    for (int k = 0; k <= STEPS; k++) {
        size_t lim = base + need * (size_t)k / STEPS;
        size_t r0 = kw_memory_refusals(NULL, NULL);
        kw_memory_set_limit(lim ? lim : 1);
        kw_clear_error();
        st = run();
        kw_memory_set_limit(0);
        int was_refused = kw_memory_refusals(NULL, NULL) > r0;
        cr_expect(st == KW_OK || (st == KW_ENOMEM && was_refused),
                  "%s under %zu bytes: status %d (%s)", name, lim - base, (int)st,
                  kw_last_error());
        cr_expect_eq(kw_memory_in_use(), base, "%s under %zu bytes: %zd bytes left held", name,
                     lim - base, (ssize_t)(kw_memory_in_use() - base));
        if (k == 0)
            cr_expect_eq(st, KW_ENOMEM, "%s with no room at all: status %d", name, (int)st);
        refused += st == KW_ENOMEM;
        if (kw_memory_in_use() != base)
            break; /* one report is enough */
    }
    cr_expect_gt(refused, 0);
}

TestSuite(memory_objects, .init = setup, .fini = teardown);

Test(memory_objects, fft) { check_object("fft", run_fft); }
Test(memory_objects, nufft) { check_object("nufft", run_nufft); }
Test(memory_objects, encoder_cartesian) { check_object("encoder", run_encoder_cart); }
Test(memory_objects, encoder_noncartesian) { check_object("encoder nc", run_encoder_noncart); }
Test(memory_objects, acquisition) { check_object("acquisition", run_acquisition); }
Test(memory_objects, pattern_poisson) { check_object("pattern poisson", run_pattern_poisson); }
Test(memory_objects, pattern_spiral) { check_object("pattern spiral", run_pattern_spiral); }
Test(memory_objects, analysis_mask) { check_object("analysis mask", run_analysis_mask); }
Test(memory_objects, analysis_trajectory) { check_object("analysis traj", run_analysis_traj); }
Test(memory_objects, dcf) { check_object("dcf", run_dcf); }
Test(memory_objects, recon_fft) { check_object("recon fft", run_recon_fft); }
Test(memory_objects, recon_sense_gfactor) { check_object("recon sense", run_recon_sense); }
Test(memory_objects, recon_coil_estimation)
{
    check_object("recon sense, estimated maps", run_recon_sense_estimated);
}
Test(memory_objects, recon_cg_sense) { check_object("recon cg-sense", run_recon_cg_sense); }
Test(memory_objects, recon_cs_wavelet) { check_object("recon cs-wavelet", run_recon_cs_wavelet); }
Test(memory_objects, recon_grappa_gfactor) { check_object("recon grappa", run_recon_grappa); }
Test(memory_objects, recon_grid) { check_object("recon grid", run_recon_grid); }
Test(memory_objects, recon_cg_sense_radial)
{
    check_object("recon cg-sense radial", run_recon_cg_sense_radial);
}
