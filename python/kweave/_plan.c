/* _plan.c: placeholder until this part is written. */
#include "kwpy.h"

int kwpy_add_plan(PyObject *m)
{
    (void)m;
    return 0;
}
