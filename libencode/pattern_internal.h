/* pattern_internal.h: the kw_pattern object shared by libencode/pattern.c
 * (masks, radial) and libencode/pattern_grad.c (spiral, EPI); not public. */
#ifndef KW_PATTERN_INTERNAL_H
#define KW_PATTERN_INTERNAL_H

#include "kw_pattern.h"

struct kw_pattern {
    kw_pattern_options o;
    kw_pattern_info info;
    uint8_t *mask;
    float *density;
    float *k, *t;
};

/* spiral / EPI: fill p->k, p->t and p->info (pattern_grad.c) */
kw_status kw_pattern_make_gradient(struct kw_pattern *p);

#endif
