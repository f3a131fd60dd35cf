/* mask_acs.c: the calibration block a mask holds (mask_acs.h). */
#include "mask_acs.h"

/* contiguous sampled run through the centre of axis `ax` (other index at its
 * centre), lo/hi offsets from the centre */
static void centre_run(const uint8_t *m, const size_t *dims, int ax, long *lo, long *hi)
{
    size_t c0 = dims[0] / 2, c1 = dims[1] / 2;
    long n = (long)dims[ax];
    long c = (long)(dims[ax] / 2);
#define AT(i) (ax == 0 ? m[(size_t)(i) * dims[1] + c1] : m[c0 * dims[1] + (size_t)(i)])
    *lo = 0;
    *hi = -1;
    if (!AT(c))
        return;
    long a = c, b = c;
    while (a - 1 >= 0 && AT(a - 1))
        a--;
    while (b + 1 < n && AT(b + 1))
        b++;
#undef AT
    *lo = a - c;
    *hi = b - c;
}

static int rect_full(const uint8_t *m, const size_t *dims, long y0, long y1, long x0, long x1)
{
    for (long y = y0; y <= y1; y++)
        for (long x = x0; x <= x1; x++)
            if (!m[(size_t)y * dims[1] + (size_t)x])
                return 0;
    return 1;
}

void kw_mask_acs_block(const uint8_t *m, const size_t dims[2], int plane, size_t block[2])
{
    long lo0, hi0, lo1, hi1;
    centre_run(m, dims, 0, &lo0, &hi0);
    if (!plane) {
        long len = hi0 - lo0 + 1;
        /* every row of the run must be fully sampled */
        if (len > 0 && !rect_full(m, dims, (long)(dims[0] / 2) + lo0, (long)(dims[0] / 2) + hi0, 0,
                                  (long)dims[1] - 1))
            len = 0;
        block[0] = len >= 2 ? (size_t)len : 0;
        block[1] = dims[1];
        return;
    }
    centre_run(m, dims, 1, &lo1, &hi1);
    long cy = (long)(dims[0] / 2), cx = (long)(dims[1] / 2);
    /* shrink the larger side until the rectangle is fully sampled */
    while (hi0 >= lo0 && hi1 >= lo1 && !rect_full(m, dims, cy + lo0, cy + hi0, cx + lo1, cx + hi1)) {
        if (hi0 - lo0 >= hi1 - lo1) {
            if (-lo0 > hi0)
                lo0++;
            else
                hi0--;
        } else {
            if (-lo1 > hi1)
                lo1++;
            else
                hi1--;
        }
    }
    long ly = hi0 - lo0 + 1, lx = hi1 - lo1 + 1;
    if (ly < 2 || lx < 2)
        ly = lx = 0;
    block[0] = (size_t)(ly > 0 ? ly : 0);
    block[1] = (size_t)(lx > 0 ? lx : 0);
}
