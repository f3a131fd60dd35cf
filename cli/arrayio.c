/* arrayio.c: .npy or HDF5 by the name (see arrayio.h). */
#include "arrayio.h"

#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "h5.h"
#include "jsonio.h"
#include "npy.h"

int kw_array_is_hdf5(const char *spec)
{
    const char *dset;
    return kw_h5_split(spec, &dset) > 0;
}

char *kw_array_sidecar_path(const char *spec)
{
    const char *dset;
    size_t n = kw_h5_split(spec, &dset);
    if (!n)
        return kw_sidecar_path(spec);
    char *file = strndup(spec, n), *r;
    if (!file)
        return NULL;
    r = kw_sidecar_path(file);
    free(file);
    return r;
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

kw_status kw_array_h5_target(const char *spec, const char *dflt, char **file, const char **dset)
{
    *file = NULL;
    *dset = NULL;
    const char *d;
    size_t n = kw_h5_split(spec, &d);
    if (!n)
        return KW_OK;
    KW_FAIL_IF(n >= 4 && strncasecmp(spec + n - 4, ".mat", 4) == 0, KW_EINVAL,
               "'%s': kweave writes HDF5 as .h5 or .hdf5, not .mat", spec);
    if (!d[0] && n < strlen(spec)) /* "FILE.h5:" */
        return kw_set_error(KW_EINVAL, "'%s' names no dataset after the ':' (e.g. %.*s:%s)", spec, (int)n,
                            spec, dflt);
    *dset = d[0] ? d : dflt;
    kw_status st = kw_h5_check_name(*dset);
    if (!st && !(*file = strndup(spec, n)))
        st = kw_set_error(KW_ENOMEM, "out of memory");
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
