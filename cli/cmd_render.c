/* cmd_render.c: `kweave render`: any .npy array -> PNG picture.
 *
 *   kweave render --in X.npy --out X.png [--part mag|phase|real|imag|logmag]
 *                 [--depth 8|16] [--window LO:HI] [--montage]
 *                 [--bar LABEL] [--units UNITS] [--title TEXT] [--tile-label WORD]
 *                 [--tile-labels LIST] [--columns N]
 *
 * "-" reads standard input / writes standard output. Arrays of 3 or more
 * dimensions always come out as a montage of their 2-D slices (png.h);
 * --montage says so explicitly and refuses inputs with fewer than 3 dims, so
 * a script that expects a stack notices when it gets a single picture.
 *
 * Without --bar, --units, --title, --tile-label(s) and --columns the output is the bare
 * picture (one pixel per value, grey PNG of the array's size: for pipelines);
 * any of them makes it a figure (figure.h: grey bar with values, quantity
 * and units, title, montage tiles with gaps and labels; 8-bit RGB). */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "arrayio.h"
#include "cli.h"
#include "figure.h"
#include "npy.h"
#include "png.h"

static const char usage_text[] =
    "usage: kweave render --in X.npy --out X.png [--part mag|phase|real|imag|logmag]\n"
    "                     [--depth 8|16] [--window LO:HI] [--montage]\n"
    "                     [--bar LABEL] [--units UNITS] [--title TEXT] [--tile-label WORD]\n"
    "                     [--tile-labels LIST] [--columns N]\n\n"
    "Draws any .npy array as a grey-scale PNG. 2-D arrays are one picture (row 0\n"
    "at the top); 3+-D arrays are a montage of their 2-D slices (last two axes)\n"
    "on a near-square grid. The automatic window runs from 0 (or the minimum if\n"
    "a value is negative) to the 99.5th percentile; phase uses -pi..pi.\n"
    "\"-\" means standard input / standard output.\n\n"
    "Without --bar, --units, --title, --tile-label(s) or --columns the PNG is the bare picture\n"
    "(one pixel per value, grey). Any of them draws a figure instead: a grey bar\n"
    "beside the picture with its values, the quantity and the units, a title,\n"
    "and a montage with gaps between tiles (labelled WORD 0, 1, ...) on a\n"
    "grid without empty tiles where one exists (8-bit RGB).";

static int parse_part(const char *s, kw_part *p)
{
    static const struct {
        const char *name;
        kw_part part;
    } parts[] = {{"mag", KW_PART_MAG},       {"magnitude", KW_PART_MAG},
                 {"phase", KW_PART_PHASE},   {"real", KW_PART_REAL},
                 {"imag", KW_PART_IMAG},     {"logmag", KW_PART_LOGMAG},
                 {"log-magnitude", KW_PART_LOGMAG}};
    for (size_t i = 0; i < sizeof parts / sizeof parts[0]; i++)
        if (strcmp(s, parts[i].name) == 0) {
            *p = parts[i].part;
            return 0;
        }
    return -1;
}

/* "LO:HI" with two finite plain numbers, HI > LO. */
static int parse_window(const char *s, float *lo, float *hi)
{
    const char *colon = strchr(s, ':');
    if (!colon || colon == s || !colon[1])
        return kw_cli_fail("window", "'%s' is not LO:HI (e.g. 0:1.5)", s);
    char *end;
    errno = 0;
    double a = strtod(s, &end);
    if (end != colon || errno)
        return kw_cli_fail("window", "LO in '%s' is not a number", s);
    double b = strtod(colon + 1, &end);
    if (*end || errno)
        return kw_cli_fail("window", "HI in '%s' is not a number", s);
    if (!isfinite(a) || !isfinite(b) || fabs(a) > 3e38 || fabs(b) > 3e38)
        return kw_cli_fail("window", "'%s': LO and HI must be finite", s);
    if (!((float)b > (float)a))
        return kw_cli_fail("window", "'%s': HI must be above LO", s);
    *lo = (float)a;
    *hi = (float)b;
    return -1;
}

int kw_cmd_render(int argc, char **argv)
{
    const char *in = NULL, *out = NULL, *part = NULL, *window = NULL;
    kw_figure_opts fo;
    kw_figure_opts_default(&fo);
    long depth = 8;
    int montage = 0;
    int seen[11] = {0};
    long columns = 0;
    const kw_opt table[] = {
        {"in", KW_OPT_STRING, &in, KW_UNIT_NONE, &seen[0], "input .npy (\"-\": stdin) or FILE.h5:/dataset (required)"},
        {"out", KW_OPT_STRING, &out, KW_UNIT_NONE, &seen[1], "output .png (\"-\": stdout) (required)"},
        {"part", KW_OPT_STRING, &part, KW_UNIT_NONE, &seen[2],
         "mag (default), phase, real, imag, logmag"},
        {"depth", KW_OPT_INT, &depth, KW_UNIT_NONE, &seen[3], "bits per pixel: 8 (default) or 16"},
        {"window", KW_OPT_STRING, &window, KW_UNIT_NONE, &seen[4],
         "LO:HI grey-level window (default: 0 .. 99.5th percentile)"},
        {"montage", KW_OPT_FLAG, &montage, KW_UNIT_NONE, NULL,
         "the input is a stack (3+ dims): tile its slices (the default for stacks)"},
        {"bar", KW_OPT_STRING, &fo.quantity, KW_UNIT_NONE, &seen[5],
         "figure with a grey bar for the quantity LABEL (default: the part's name)"},
        {"units", KW_OPT_STRING, &fo.units, KW_UNIT_NONE, &seen[6],
         "figure; units after the bar's quantity, e.g. Hz (default none)"},
        {"title", KW_OPT_STRING, &fo.title, KW_UNIT_NONE, &seen[7],
         "figure; title above the picture (default none)"},
        {"tile-label", KW_OPT_STRING, &fo.tile_label, KW_UNIT_NONE, &seen[8],
         "figure; montage tiles labelled WORD 0, 1, ... e.g. coil (default none)"},
        {"tile-labels", KW_OPT_STRING, &fo.tile_names, KW_UNIT_NONE, &seen[9],
         "figure; one label per montage tile, comma-separated, e.g. truth,grid,cg-sense "
         "(default none)"},
        {"columns", KW_OPT_INT, &columns, KW_UNIT_NONE, &seen[10],
         "figure; montage columns (default: the grid without empty tiles)"},
        {NULL, 0, NULL, 0, NULL, NULL},
    };
    static const kw_opt_arg args[] = {{"bar", "LABEL"}, {"title", "TEXT"}, {"tile-label", "WORD"},
                                      {"tile-labels", "LIST"}, {NULL, NULL}};
    kw_opts_set_args(args);
    int rc = kw_opts_parse(argc, argv, table, usage_text, NULL, 0, NULL);
    if (rc >= 0)
        return rc;
    if (!in)
        return kw_cli_fail("in", "missing (the .npy array to draw)");
    if (!out)
        return kw_cli_fail("out", "missing (the .png file to write)");

    kw_png_opts po;
    kw_png_opts_default(&po);
    if (part && parse_part(part, &po.part))
        return kw_cli_choice_fail("part", "part", part,
                                  (const char *const[]){"mag", "phase", "real", "imag", "logmag",
                                                        "magnitude", "log-magnitude", NULL});
    if (depth != 8 && depth != 16)
        return kw_cli_fail("depth", "%ld bits is not supported (8 or 16)", depth);
    po.depth = (int)depth;
    int figure = seen[5] || seen[6] || seen[7] || seen[8] || seen[9] || seen[10];
    if (seen[8] && seen[9])
        return kw_cli_fail("tile-labels", "give --tile-label WORD or --tile-labels LIST, not both");
    if (seen[10] && columns < 1)
        return kw_cli_fail("columns", "%ld is not a number of columns (1 or more)", columns);
    fo.columns = seen[10] ? (size_t)columns : 0;
    if (figure && depth != 8)
        return kw_cli_fail("depth", "a figure (--bar, --units, --title, --tile-label, --tile-labels, "
                           "--columns) is 8-bit; "
                           "leave those out for a 16-bit bare picture");
    if (window) {
        rc = parse_window(window, &po.lo, &po.hi);
        if (rc >= 0)
            return rc;
        po.auto_window = 0;
    }

    kw_array a;
    kw_status st = kw_array_read(in, &a);
    if (st)
        return kw_cli_status(st, "in");
    if (montage && a.ndim < 3) {
        kw_array_free(&a);
        return kw_cli_fail("montage", "the input has %d dimension%s; a montage needs "
                           "a stack of 2-D slices (3 or more)", a.ndim,
                           a.ndim == 1 ? "" : "s");
    }
    if (kw_array_count(&a) == 0) {
        kw_array_free(&a);
        return kw_cli_fail("in", "the array is empty (a dimension is 0), nothing to draw");
    }
    if (seen[9] || seen[10]) { /* one label per tile; columns within the tiles */
        size_t tiles = 1, names = 1;
        for (int d = 0; d + 2 < a.ndim; d++)
            tiles *= a.dims[d];
        for (const char *c = fo.tile_names; c && *c; c++)
            names += *c == ',';
        int nd = a.ndim;
        if (nd < 3 || (seen[9] && names != tiles) || (seen[10] && (size_t)columns > tiles)) {
            kw_array_free(&a);
            if (nd < 3)
                return kw_cli_fail(seen[9] ? "tile-labels" : "columns",
                                   "the input is one picture, not a stack of tiles");
            if (seen[9] && names != tiles)
                return kw_cli_fail("tile-labels", "%zu label%s for %zu tiles (give one per tile)",
                                   names, names == 1 ? "" : "s", tiles);
            return kw_cli_fail("columns", "%ld columns for %zu tiles", columns, tiles);
        }
    }
    /* The picture needs the values shown and a scratch copy for the
     * percentile (2 floats per element) and the pixels (up to 2 bytes each,
     * montage padding included at most doubling them) beside the array. */
    size_t n = kw_array_count(&a);
    double need = (double)n * (double)kw_dtype_size(a.dtype) + (double)n * 8.0 +
                  (double)n * 4.0;
    if (need > (double)kw_cli_memory_limit()) {
        kw_array_free(&a);
        return kw_cli_fail("max-memory", "drawing %zu values needs about %.3g MiB, "
                           "above the limit of %.3g MiB", n, need / 1048576.0,
                           (double)kw_cli_memory_limit() / 1048576.0);
    }
    st = kw_array_all_finite(&a);
    if (st) {
        kw_array_free(&a);
        return kw_cli_status(st, "in");
    }
    st = figure ? kw_figure_write(out, &a, &po, &fo) : kw_png_write_array(out, &a, &po);
    kw_array_free(&a);
    if (st)
        return kw_cli_status(st, "out");
    return KW_EXIT_OK;
}
