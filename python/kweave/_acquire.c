/* _acquire.c: placeholder until this part is written. */
#include "kwpy.h"

int kwpy_add_acquire(PyObject *m)
{
    (void)m;
    return 0;
}
