/* _pattern.c: placeholder until this part is written. */
#include "kwpy.h"

int kwpy_add_pattern(PyObject *m)
{
    (void)m;
    return 0;
}
