/* arrayio.c: .npy or HDF5 by the name (see arrayio.h). */
#include "arrayio.h"

#include <stdlib.h>
#include <string.h>

#include "h5.h"
#include "npy.h"

int kw_array_is_hdf5(const char *spec)
{
    const char *dset;
    return kw_h5_split(spec, &dset) > 0;
}

kw_status kw_array_read(const char *spec, kw_array *out)
{
    const char *dset;
    size_t n = kw_h5_split(spec, &dset);
    if (!n)
        return kw_npy_read(spec, out);
    char *file = malloc(n + 1);
    if (!file)
        return kw_set_error(KW_ENOMEM, "out of memory");
    memcpy(file, spec, n);
    file[n] = '\0';
    kw_status st = kw_h5_read(file, dset, out);
    free(file);
    return st;
}

int kw_array_pairs_to_complex(kw_array *a)
{
    if (a->dtype != KW_F32 || a->ndim < 2 || a->dims[a->ndim - 1] != 2)
        return -1;
    /* (..., 2) float32 is laid out exactly as (...) complex64 */
    a->dtype = KW_C64;
    a->ndim--;
    return 0;
}

kw_status kw_array_read_complex(const char *spec, kw_array *out)
{
    kw_status st = kw_array_read(spec, out);
    if (!st && kw_array_is_hdf5(spec))
        kw_array_pairs_to_complex(out);
    return st;
}
