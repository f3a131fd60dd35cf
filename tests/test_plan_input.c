/* test_plan_input.c: the protocol input of kw_plan_input.h (keys with
 * units, protocol texts, precedence) and the JSON report, against what
 * `kweave plan` (kw_cmd_plan) itself accepts, refuses and writes. */
#define _POSIX_C_SOURCE 200809L
#include <criterion/criterion.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "kw_plan_input.h"
#include "plan_input_int.h"

static kw_protocol_input *make(void)
{
    kw_protocol_input *in = NULL;
    cr_assert_eq(kw_protocol_input_create(&in), KW_OK);
    cr_assert_not_null(in);
    return in;
}

static kw_protocol finish(const kw_protocol_input *in)
{
    kw_protocol p;
    cr_assert_eq(kw_protocol_input_finish(in, &p), KW_OK, "%s", kw_last_error());
    return p;
}

Test(plan_input, keys_are_the_commands_options)
{
    static const char *const want[] = {
        "sequence", "fov", "matrix", "bandwidth", "b0", "gmax", "slew", "raster",
        "temperature", "te", "tr", "rf-duration", "tbw", "slice", "spoiler", "crusher",
        "t2star", "shots", "partial-fourier", "interleaves", "max-readout", "spokes",
        "averages"};
    const char *const *k = kw_protocol_keys();
    size_t n = 0;
    while (k[n])
        n++;
    cr_assert_eq(n, sizeof want / sizeof *want);
    for (size_t i = 0; i < n; i++)
        cr_expect_str_eq(k[i], want[i]);
}

Test(plan_input, defaults_are_the_protocol_defaults)
{
    kw_protocol_input *in = make();
    kw_protocol p = finish(in), d;
    kw_protocol_defaults(&d);
    cr_expect_eq(memcmp(&p, &d, sizeof p), 0);
    const char *v = "x";
    cr_expect_eq(kw_protocol_input_get(in, "fov", &v), KW_OK);
    cr_expect_null(v);
    kw_protocol_input_destroy(in);
    kw_protocol_input_destroy(NULL);
}

/* Every key set from its text, read back as text and in the protocol. */
Test(plan_input, every_key_set_and_read_back)
{
    static const struct {
        const char *key, *text;
    } kv[] = {
        {"sequence", "epi"},     {"fov", "240mm,180mm"}, {"matrix", "128x96"},
        {"bandwidth", "2kHz/pixel"}, {"b0", "1.5T"},     {"gmax", "45mT/m"},
        {"slew", "200T/m/s"},    {"raster", "5us"},      {"temperature", "300K"},
        {"te", "30ms"},          {"tr", "3s"},           {"rf-duration", "2.5ms"},
        {"tbw", "6"},            {"slice", "3mm"},       {"spoiler", "4"},
        {"crusher", "3"},        {"t2star", "40ms"},     {"shots", "2"},
        {"partial-fourier", "0.75"}, {"interleaves", "8"}, {"max-readout", "12ms"},
        {"spokes", "300"},       {"averages", "3"}};
    kw_protocol_input *in = make();
    for (size_t i = 0; i < sizeof kv / sizeof *kv; i++) {
        cr_assert_eq(kw_protocol_input_set(in, kv[i].key, kv[i].text), KW_OK, "%s: %s",
                     kv[i].key, kw_last_error());
        const char *v = NULL;
        cr_assert_eq(kw_protocol_input_get(in, kv[i].key, &v), KW_OK);
        cr_expect_str_eq(v, kv[i].text);
    }
    kw_protocol p = finish(in);
    cr_expect_eq(p.sequence, KW_SEQ_EPI);
    cr_expect_eq(p.ndim, 2);
    cr_expect_float_eq(p.fov_m[0], 0.240, 1e-12);
    cr_expect_float_eq(p.fov_m[1], 0.180, 1e-12);
    cr_expect_eq(p.matrix[0], 128);
    cr_expect_eq(p.matrix[1], 96);
    cr_expect_float_eq(p.bandwidth_hz, 2000.0 * 128, 1e-6);
    cr_expect_float_eq(p.b0_t, 1.5, 1e-12);
    cr_expect_float_eq(p.gmax_T_per_m, 0.045, 1e-12);
    cr_expect_float_eq(p.slew_T_per_m_per_s, 200, 1e-9);
    cr_expect_float_eq(p.raster_s, 5e-6, 1e-15);
    cr_expect_float_eq(p.temperature_k, 300, 1e-9);
    cr_expect_float_eq(p.te_s, 0.030, 1e-12);
    cr_expect_float_eq(p.tr_s, 3.0, 1e-12);
    cr_expect_float_eq(p.rf_duration_s, 2.5e-3, 1e-12);
    cr_expect_float_eq(p.tbw, 6, 1e-12);
    cr_expect_float_eq(p.slice_m, 3e-3, 1e-12);
    cr_expect_float_eq(p.spoiler_cycles, 4, 1e-12);
    cr_expect_float_eq(p.crusher_cycles, 3, 1e-12);
    cr_expect_float_eq(p.t2star_s, 0.040, 1e-12);
    cr_expect_eq(p.shots, 2);
    cr_expect_float_eq(p.partial_fourier, 0.75, 1e-12);
    cr_expect_eq(p.interleaves, 8);
    cr_expect_float_eq(p.max_readout_s, 12e-3, 1e-12);
    cr_expect_eq(p.spokes, 300);
    cr_expect_eq(p.averages, 3);
    /* cleared: back to the default */
    cr_expect_eq(kw_protocol_input_clear(in, "gmax"), KW_OK);
    cr_expect_eq(kw_protocol_input_clear(in, "matrix"), KW_OK);
    const char *v = "x";
    cr_expect_eq(kw_protocol_input_get(in, "gmax", &v), KW_OK);
    cr_expect_null(v);
    p = finish(in);
    cr_expect_float_eq(p.gmax_T_per_m, 0.040, 1e-12);
    cr_expect_eq(p.matrix[0], 256);
    kw_protocol_input_destroy(in);
}

/* What `kweave plan --KEY VALUE` prints after "kweave: error: ". */
static void command_error(const char *key, const char *value, char *line, size_t n)
{
    char dir[] = "/tmp/kw_plan_input_XXXXXX";
    cr_assert_not_null(mkdtemp(dir));
    char path[64];
    snprintf(path, sizeof path, "%s/err.txt", dir);
    char opt[64];
    snprintf(opt, sizeof opt, "--%s", key);
    char a0[] = "plan", a2[256], a3[] = "--quiet";
    snprintf(a2, sizeof a2, "%s", value);
    char *argv[] = {a0, opt, a2, a3, NULL};
    fflush(stdout);
    fflush(stderr);
    int fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
    int saved_err = dup(STDERR_FILENO), saved_out = dup(STDOUT_FILENO);
    int devnull = open("/dev/null", O_WRONLY);
    dup2(fd, STDERR_FILENO);
    dup2(devnull, STDOUT_FILENO);
    int rc = kw_cmd_plan(4, argv);
    fflush(stdout);
    fflush(stderr);
    dup2(saved_err, STDERR_FILENO);
    dup2(saved_out, STDOUT_FILENO);
    close(saved_err);
    close(saved_out);
    close(devnull);
    close(fd);
    cr_expect_eq(rc, 2, "--%s %s: exit %d", key, value, rc);
    FILE *f = fopen(path, "r");
    cr_assert_not_null(f);
    line[0] = '\0';
    if (!fgets(line, (int)n, f))
        line[0] = '\0';
    fclose(f);
    line[strcspn(line, "\n")] = '\0';
    unlink(path);
    rmdir(dir);
}

Test(plan_input, bad_values_fail_as_the_command_does)
{
    static const struct {
        const char *key, *text, *why;
    } bad[] = {
        {"fov", "-1mm", "fov: must be positive (got -0.001 m)"},
        {"fov", "256", NULL},
        {"matrix", "256y3", "matrix: '256y3' is not NX, NXxNY or NXxNYxNZ"},
        {"matrix", "9000", "matrix: 9000 is outside 1 to 8192"},
        {"sequence", "fse", "sequence: unknown sequence 'fse'; did you mean 'se'? (one of: gre, se, epi, radial, spiral)"},
        {"te", "0ms", "te: must be positive (got '0ms')"},
        {"tr", "-1ms", "tr: must be positive (got '-1ms')"},
        {"t2star", "0s", "t2star: must be positive (got '0s')"},
        {"gmax", "40", NULL},
        {"b0", "3mT/m", NULL},
        {"shots", "0", "shots: 0 is outside 1 to 8192"},
        {"interleaves", "two", "interleaves: 'two' is not a whole number"},
        {"spokes", "2000000", "spokes: 2000000 is outside 1 to 1000000"},
        {"averages", "1.5", "averages: '1.5' is not a whole number"},
        {"bandwidth", "-3kHz", NULL},
        {"partial-fourier", "3/4", NULL},
    };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        kw_protocol_input *in = make();
        kw_status st = kw_protocol_input_set(in, bad[i].key, bad[i].text);
        cr_expect_eq(st, KW_EINVAL, "%s = %s accepted", bad[i].key, bad[i].text);
        cr_expect_str_eq(kw_last_error_param(), bad[i].key);
        char lib[512];
        snprintf(lib, sizeof lib, "%s", kw_last_error());
        if (bad[i].why)
            cr_expect_str_eq(lib, bad[i].why);
        /* on error the input is unchanged */
        const char *v = "x";
        cr_expect_eq(kw_protocol_input_get(in, bad[i].key, &v), KW_OK);
        cr_expect_null(v);
        kw_protocol_input_destroy(in);
        char line[600], want[600];
        command_error(bad[i].key, bad[i].text, line, sizeof line);
        snprintf(want, sizeof want, "kweave: error: %s", lib);
        cr_expect_str_eq(line, want);
    }
}

Test(plan_input, unknown_key_named_with_a_suggestion)
{
    kw_protocol_input *in = make();
    cr_expect_eq(kw_protocol_input_set(in, "warp", "9"), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "warp: unknown key");
    cr_expect_str_eq(kw_last_error_param(), "warp");
    cr_expect_eq(kw_protocol_input_set(in, "fvo", "256mm"), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "fvo: unknown key (did you mean 'fov'?)");
    cr_expect_eq(kw_protocol_input_set(in, "bandwith", "32kHz"), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "bandwith: unknown key (did you mean 'bandwidth'?)");
    const char *v;
    cr_expect_eq(kw_protocol_input_get(in, "warp", &v), KW_EINVAL);
    cr_expect_eq(kw_protocol_input_clear(in, "warp"), KW_EINVAL);
    cr_expect_eq(kw_protocol_input_set(in, NULL, "1"), KW_EINVAL);
    cr_expect_eq(kw_protocol_input_set(NULL, "fov", "1mm"), KW_EINVAL);
    cr_expect_eq(kw_protocol_input_create(NULL), KW_EINVAL);
    kw_protocol_input_destroy(in);
}

Test(plan_input, protocol_text)
{
    const char *t = "# a 3-D GRE\nsequence = gre\nfov = 256mm,192mm,64mm  # x,y,z\n"
                    "matrix = 256x192x32\nbandwidth = 64kHz\nbandwidth = 250Hz/pixel\n"
                    "te = 4ms\n";
    kw_protocol_input *in = make();
    cr_assert_eq(kw_protocol_input_parse(in, t, strlen(t)), KW_OK, "%s", kw_last_error());
    kw_protocol p = finish(in);
    cr_expect_eq(p.ndim, 3);
    cr_expect_eq(p.matrix[2], 32);
    cr_expect_float_eq(p.fov_m[2], 0.064, 1e-12);
    cr_expect_float_eq(p.bandwidth_hz, 64000, 1e-6);
    cr_expect_float_eq(p.te_s, 4e-3, 1e-12);
    /* the caller's values over the file's: a set replaces a key ... */
    cr_expect_eq(kw_protocol_input_set(in, "te", "5ms"), KW_OK);
    cr_expect_float_eq(finish(in).te_s, 5e-3, 1e-12);
    /* ... but the bandwidth only once cleared */
    cr_expect_eq(kw_protocol_input_set(in, "bandwidth", "32kHz"), KW_EINVAL);
    cr_expect_str_eq(kw_last_error(), "bandwidth: given more than once across the FOV");
    cr_expect_eq(kw_protocol_input_clear(in, "bandwidth"), KW_OK);
    cr_expect_eq(kw_protocol_input_set(in, "bandwidth", "32kHz"), KW_OK);
    cr_expect_float_eq(finish(in).bandwidth_hz, 32000, 1e-6);
    kw_protocol_input_destroy(in);

    struct {
        const char *text, *why;
        kw_status st;
    } bad[] = {
        {"fov = 256mm\nfov = 200mm\n", "line 2: fov: given more than once", KW_EINVAL},
        {"te = 5ms\nwarp = 9\n", "line 2: warp: unknown key", KW_EINVAL},
        {"\n\ntbw = x\n", "line 3: tbw: ", KW_EINVAL},
        {"gmax 40mT/m\n", "line 1: expected 'key = value', found no '='", KW_EFORMAT},
        {"bandwidth = 250Hz/pixel\nbandwidth = 200Hz/pixel\n",
         "line 2: bandwidth: given more than once per pixel", KW_EINVAL},
    };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        in = make();
        cr_expect_eq(kw_protocol_input_parse(in, bad[i].text, strlen(bad[i].text)), bad[i].st,
                     "%s", bad[i].text);
        cr_expect(strncmp(kw_last_error(), bad[i].why, strlen(bad[i].why)) == 0, "'%s' -> '%s'",
                  bad[i].text, kw_last_error());
        kw_protocol_input_destroy(in);
    }
}

Test(plan_input, finish_checks_the_whole)
{
    struct {
        const char *k1, *v1, *k2, *v2, *why;
    } bad[] = {
        {"fov", "256mm,256mm,64mm", "matrix", "256", "fov: a z FOV needs a 3-D matrix NXxNYxNZ"},
        {"fov", "256mm,200mm", "matrix", "64x64x16",
         "fov: a 3-D matrix needs x,y,z FOVs (or one for all)"},
        {"bandwidth", "32kHz", "bandwidth", "250Hz/pixel",
         "bandwidth: 32000 Hz across the FOV contradicts 250 Hz/pixel x 256 pixels = 64000 Hz"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        kw_protocol_input *in = make();
        cr_assert_eq(kw_protocol_input_set(in, bad[i].k1, bad[i].v1), KW_OK);
        cr_assert_eq(kw_protocol_input_set(in, bad[i].k2, bad[i].v2), KW_OK);
        kw_protocol p;
        cr_expect_eq(kw_protocol_input_finish(in, &p), KW_EINVAL);
        cr_expect_str_eq(kw_last_error(), bad[i].why);
        kw_protocol_input_destroy(in);
    }
}

static char *slurp(const char *path)
{
    FILE *f = fopen(path, "rb");
    cr_assert_not_null(f, "%s", path);
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *s = malloc((size_t)n + 1);
    cr_assert_eq(fread(s, 1, (size_t)n, f), (size_t)n);
    s[n] = '\0';
    fclose(f);
    return s;
}

/* kw_plan_report_json() is, byte for byte, the file `kweave plan --json`
 * writes, for a feasible and an infeasible protocol of each kind, with and
 * without a reference. */
Test(plan_input, json_text_is_the_commands_file)
{
    static const char *const protos[] = {
        "sequence = gre\nfov = 256mm\nmatrix = 256\nbandwidth = 250Hz/pixel\n",
        "sequence = se\nfov = 240mm,180mm\nmatrix = 320x240\nb0 = 1.5T\n",
        "sequence = epi\nmatrix = 96\nfov = 240mm\npartial-fourier = 0.75\nt2star = 40ms\n",
        "sequence = radial\nmatrix = 128\n",
        "sequence = spiral\nmatrix = 128\nmax-readout = 8ms\n",
        "matrix = 256x192x32\nfov = 256mm,192mm,64mm\n",
        "slice = 0.4mm\nte = 2ms\n", /* infeasible */
    };
    char dir[] = "/tmp/kw_plan_json_XXXXXX";
    cr_assert_not_null(mkdtemp(dir));
    char proto[80], json[80], refp[80];
    snprintf(proto, sizeof proto, "%s/p.protocol", dir);
    snprintf(json, sizeof json, "%s/p.json", dir);
    snprintf(refp, sizeof refp, "%s/ref.protocol", dir);
    const char *reft = "matrix = 128\nslice = 4mm\n";
    FILE *rf = fopen(refp, "w");
    cr_assert_not_null(rf);
    fputs(reft, rf);
    fclose(rf);
    double ref_factor;
    {
        kw_protocol_input *in = make();
        cr_assert_eq(kw_protocol_input_parse(in, reft, strlen(reft)), KW_OK);
        kw_protocol p = finish(in);
        kw_plan_report *r = NULL;
        cr_assert_eq(kw_plan_create(&r, &p), KW_OK);
        ref_factor = r->snr_factor;
        kw_plan_destroy(r);
        kw_protocol_input_destroy(in);
    }
    for (size_t i = 0; i < sizeof protos / sizeof *protos; i++)
        for (int withref = 0; withref < 2; withref++) {
            FILE *f = fopen(proto, "w");
            cr_assert_not_null(f);
            fputs(protos[i], f);
            fclose(f);
            char a0[] = "plan", a1[] = "--protocol", a3[] = "--json", a5[] = "--reference";
            char *argv[] = {a0, a1, proto, a3, json, a5, refp, NULL};
            fflush(stdout);
            int saved = dup(STDOUT_FILENO), devnull = open("/dev/null", O_WRONLY);
            dup2(devnull, STDOUT_FILENO);
            int rc = kw_cmd_plan(withref ? 7 : 5, argv);
            fflush(stdout);
            dup2(saved, STDOUT_FILENO);
            close(saved);
            close(devnull);
            cr_assert(rc == 0 || rc == 3, "exit %d for %s", rc, protos[i]);
            char *file = slurp(json);
            kw_protocol_input *in = make();
            cr_assert_eq(kw_protocol_input_parse(in, protos[i], strlen(protos[i])), KW_OK);
            kw_protocol p = finish(in);
            kw_plan_report *r = NULL;
            cr_assert_eq(kw_plan_create(&r, &p), KW_OK);
            char *text = NULL;
            cr_assert_eq(kw_plan_report_json(r, withref ? ref_factor : 0, &text), KW_OK);
            cr_expect_str_eq(text, file, "protocol %zu, reference %d", i, withref);
            cr_expect_eq(r->feasible, rc == 0);
            cr_expect_not_null(strstr(text, "\"safety_caution\""));
            kw_free(text);
            free(file);
            kw_plan_destroy(r);
            kw_protocol_input_destroy(in);
            unlink(json);
        }
    unlink(proto);
    unlink(refp);
    rmdir(dir);
    char *t = (char *)1;
    cr_expect_eq(kw_plan_report_json(NULL, 0, &t), KW_EINVAL);
    cr_expect_null(t);
}

/* The simulator's dialect (plan_input_int.h): texts only at parse, flip and
 * ti kept, every key once, counts up to 1000000, no line numbers after. */
Test(plan_input, encode_dialect)
{
    const char *t = "sequence = se\nflip = 90\nti = 1s\nshots = 100000\nt2star = 0ms\n"
                    "gmax = 30mT/m\nfov = 220mm\n";
    kw_protocol_input *in = make();
    kw_protocol_input_encode_dialect(in);
    cr_assert_eq(kw_protocol_input_parse(in, t, strlen(t)), KW_OK, "%s", kw_last_error());
    const char *v = NULL;
    cr_expect_eq(kw_protocol_input_get(in, "flip", &v), KW_OK);
    cr_expect_str_eq(v, "90");
    cr_expect_eq(kw_protocol_input_get(in, "fov", &v), KW_OK);
    cr_expect_str_eq(v, "220mm");
    static const char *const own[] = {"sequence", "fov", "matrix", "bandwidth", "b0", "te",
                                      "tr", "flip", "ti", NULL};
    kw_protocol p;
    kw_protocol_defaults(&p);
    cr_assert_eq(kw_protocol_input_encode_fill(in, own, &p), KW_OK, "%s", kw_last_error());
    cr_expect_eq(p.shots, 100000);
    cr_expect_float_eq(p.gmax_T_per_m, 0.030, 1e-12);
    cr_expect_float_eq(p.t2star_s, 0, 1e-12);
    cr_expect_float_eq(p.fov_m[0], 0.256, 1e-12); /* fov is the caller's */
    kw_protocol_input_destroy(in);

    struct {
        const char *text, *why;
        int at_parse;
    } bad[] = {
        {"bandwidth = 32kHz\nbandwidth = 250Hz/pixel\n", "line 2: bandwidth: given more than once", 1},
        {"warp = 3\n", "warp: unknown key", 0},
        {"shots = 0\n", "shots: '0' is not a whole number >= 1", 0},
        {"gmax = 40\n", "gmax: ", 0},
    };
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++) {
        in = make();
        kw_protocol_input_encode_dialect(in);
        kw_status st = kw_protocol_input_parse(in, bad[i].text, strlen(bad[i].text));
        if (!bad[i].at_parse) {
            cr_expect_eq(st, KW_OK, "%s", kw_last_error());
            kw_protocol_defaults(&p);
            st = kw_protocol_input_encode_fill(in, own, &p);
        }
        cr_expect_eq(st, KW_EINVAL, "%s", bad[i].text);
        cr_expect(strncmp(kw_last_error(), bad[i].why, strlen(bad[i].why)) == 0, "'%s' -> '%s'",
                  bad[i].text, kw_last_error());
        kw_protocol_input_destroy(in);
    }
}
