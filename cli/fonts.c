/* fonts.c: see fonts.h. FcFini is looked up at run time: cairo brings
 * fontconfig in, kweave does not link it itself. */
#include "fonts.h"

#include <cairo.h>
#include <dlfcn.h>

void kw_figure_release_fonts(void)
{
    cairo_debug_reset_static_data();
    void (*fc_fini)(void);
    *(void **)&fc_fini = dlsym(RTLD_DEFAULT, "FcFini");
    if (fc_fini)
        fc_fini();
}
