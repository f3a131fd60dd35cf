/* png.c: placeholder until the PNG writer lands. */
#include "png.h"

void kw_png_opts_default(kw_png_opts *o)
{
    o->depth = 8;
    o->auto_window = 1;
    o->lo = o->hi = 0;
    o->part = KW_PART_MAG;
}

kw_status kw_png_write_array(const char *path, const kw_array *a, const kw_png_opts *o)
{
    (void)a;
    (void)o;
    return kw_set_error(KW_ENOTSUP, "%s: PNG writer not built yet", path);
}

kw_status kw_png_write_rgb8(const char *path, const uint8_t *rgb, size_t w, size_t h)
{
    (void)rgb;
    (void)w;
    (void)h;
    return kw_set_error(KW_ENOTSUP, "%s: PNG writer not built yet", path);
}

kw_status kw_png_window(const float *v, size_t n, float *lo, float *hi)
{
    (void)v;
    (void)n;
    *lo = *hi = 0;
    return KW_ENOTSUP;
}
