/* json_slot.h: places in a report the library builds where its caller (the
 * command line) writes keys of its own, such as the names of the files it
 * read or wrote, so that those keys keep their place in the file. Not a
 * public header: the public calls build without a slot function, and the
 * slots' keys are then left out (or given the library's default). */
#ifndef KW_JSON_SLOT_H
#define KW_JSON_SLOT_H

#include <cJSON.h>

/* Called at the place named `slot` with the object being built: returns 1
 * when it wrote the slot's keys (the library's default, if it has one, is
 * then skipped), 0 when it left the slot alone. */
typedef int (*kw_json_slot_fn)(cJSON *obj, const char *slot, void *user);

static inline int kw_json_slot(kw_json_slot_fn fn, void *user, cJSON *obj, const char *slot)
{
    return fn ? fn(obj, slot, user) : 0;
}

#endif
