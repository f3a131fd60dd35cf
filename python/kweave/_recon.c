/* _recon.c: placeholder until this part is written. */
#include "kwpy.h"

int kwpy_add_recon(PyObject *m)
{
    (void)m;
    return 0;
}
