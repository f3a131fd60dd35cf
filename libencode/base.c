/* base.c: status strings, thread-local error reasons, aligned arrays. */
#include "kw_base.h"

#include <malloc.h>
#include <math.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static _Thread_local char last_error[512];
static _Thread_local char last_param[64];
static _Thread_local const char *last_reason = "";

const char *kw_version(void) { return KW_VERSION_STRING; }

const char *kw_safety_caution(void) { return KW_SAFETY_CAUTION; }

const char *kw_strerror(kw_status s)
{
    switch (s) {
    case KW_OK: return "success";
    case KW_EINVAL: return "invalid argument";
    case KW_ENOMEM: return "out of memory or size overflow";
    case KW_ERANGE: return "value out of range";
    case KW_EFORMAT: return "malformed data";
    case KW_EIO: return "input/output error";
    case KW_ENOTSUP: return "not supported";
    case KW_EINFEASIBLE: return "infeasible under the given limits";
    case KW_ENUMERIC: return "numerical failure (NaN, Inf or singular)";
    case KW_ECANCELLED: return "cancelled";
    case KW_EINTERNAL: return "internal error";
    }
    return "unknown status";
}

const char *kw_last_error(void) { return last_error; }
const char *kw_last_error_param(void) { return last_param; }
const char *kw_last_error_reason(void) { return last_reason[0] ? last_reason : last_error; }

void kw_clear_error(void)
{
    last_error[0] = '\0';
    last_param[0] = '\0';
    last_reason = "";
}

/* Format into a scratch buffer first: callers may pass kw_last_error() (or
 * the reason) itself as an argument, wrapping a lower layer's message. */
static void set_error_v(const char *param, const char *fmt, va_list ap)
{
    char buf[sizeof last_error], reason[sizeof last_error];
    vsnprintf(reason, sizeof reason, fmt, ap);
    size_t np = 0;
    if (param && param[0]) {
        snprintf(last_param, sizeof last_param, "%s", param);
        np = strlen(last_param) + 2;
        memcpy(buf, last_param, np - 2);
        memcpy(buf + np - 2, ": ", 2);
        size_t nr = strnlen(reason, sizeof buf - np - 1);
        memcpy(buf + np, reason, nr);
        buf[np + nr] = '\0';
    } else {
        memcpy(buf, reason, sizeof buf);
        last_param[0] = '\0';
    }
    memcpy(last_error, buf, sizeof last_error);
    last_reason = np < strlen(last_error) ? last_error + np : "";
}

kw_status kw_set_error(kw_status s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    set_error_v(NULL, fmt, ap);
    va_end(ap);
    return s;
}

kw_status kw_set_error_param(kw_status s, const char *param, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    set_error_v(param, fmt, ap);
    va_end(ap);
    return s;
}

kw_status kw_error_reparam(kw_status st, const char *from, const char *to)
{
    if (st == KW_OK || (from && strcmp(last_param, from) != 0))
        return st;
    char why[sizeof last_error];
    snprintf(why, sizeof why, "%s", from ? kw_last_error_reason()
                                         : (last_error[0] ? last_error : kw_strerror(st)));
    return kw_set_error_param(st, to, "%s", why);
}

kw_status kw_options_take(void *dst, size_t dst_size, const void *src, const char *what)
{
    KW_FAIL_PARAM(!src, KW_EINVAL, what, "NULL options (fill them with the _init() call first)");
    size_t n;
    memcpy(&n, src, sizeof n);
    KW_FAIL_PARAM(n < sizeof(size_t), KW_EINVAL, what,
                  "options not initialised (struct_size %zu; call the _init() first)", n);
    KW_FAIL_PARAM(n > dst_size, KW_EINVAL, what,
                  "options struct of %zu bytes, larger than this library's %zu "
                  "(built against a newer kweave)", n, dst_size);
    memcpy(dst, src, n);
    memcpy(dst, &dst_size, sizeof dst_size);
    return KW_OK;
}

size_t kw_dtype_size(kw_dtype t)
{
    switch (t) {
    case KW_F32: return sizeof(float);
    case KW_C64: return sizeof(float complex);
    case KW_U8: return 1;
    }
    return 0;
}

size_t kw_array_count(const kw_array *a)
{
    size_t n = 1;
    for (int i = 0; i < a->ndim; i++) {
        if (a->dims[i] != 0 && n > SIZE_MAX / a->dims[i])
            return 0;
        n *= a->dims[i];
    }
    return n;
}

kw_status kw_checked_whole(double v, long long lo, long long hi, long long *out)
{
    /* |lo|, |hi| <= 2^53 keeps the double comparison exact */
    if (!isfinite(v) || v != floor(v) || v < (double)lo || v > (double)hi)
        return KW_ERANGE;
    *out = (long long)v;
    return KW_OK;
}

kw_status kw_checked_bytes(const size_t *dims, int ndim, size_t elem,
                           size_t limit, size_t *bytes)
{
    KW_FAIL_IF(ndim < 0 || ndim > KW_MAX_DIMS, KW_EINVAL,
               "array: %d dimensions (at most %d)", ndim, KW_MAX_DIMS);
    size_t n = elem;
    for (int i = 0; i < ndim; i++) {
        KW_FAIL_IF(dims[i] != 0 && n > SIZE_MAX / dims[i], KW_ENOMEM,
                   "array: shape product overflows");
        n *= dims[i];
    }
    KW_FAIL_IF(limit && n > limit, KW_ENOMEM,
               "array: needs %.3g MiB, above the limit of %.3g MiB",
               n / 1048576.0, limit / 1048576.0);
    *bytes = n;
    return KW_OK;
}

/* The process's allocation budget (kw_memory_set_limit): bytes held through
 * kw_alloc, counted by the allocator's own size of each block so that
 * kw_free subtracts exactly what kw_alloc added. A refusal is counted for
 * the whole process (OpenMP workers allocate too) with the size asked and
 * the bytes held at that moment, so that a front end can say what was
 * wanted after the failure has travelled up the calls. */
static atomic_size_t mem_used, mem_peak, mem_limit;
static atomic_size_t mem_refusals, mem_refused_asked, mem_refused_held;
static _Thread_local int mem_refused; /* this thread's last kw_alloc */

void kw_memory_set_limit(size_t bytes) { atomic_store(&mem_limit, bytes); }
size_t kw_memory_limit(void) { return atomic_load(&mem_limit); }
size_t kw_memory_in_use(void) { return atomic_load(&mem_used); }
size_t kw_memory_peak(void) { return atomic_load(&mem_peak); }
void kw_memory_reset_peak(void) { atomic_store(&mem_peak, atomic_load(&mem_used)); }

size_t kw_memory_refusals(size_t *asked, size_t *held)
{
    if (asked)
        *asked = atomic_load(&mem_refused_asked);
    if (held)
        *held = atomic_load(&mem_refused_held);
    return atomic_load(&mem_refusals);
}

static void *refuse(size_t asked, size_t held)
{
    mem_refused = 1;
    atomic_store(&mem_refused_asked, asked);
    atomic_store(&mem_refused_held, held);
    atomic_fetch_add(&mem_refusals, 1);
    return NULL;
}

void *kw_alloc(size_t n)
{
    mem_refused = 0;
    if (n == 0)
        return NULL;
    size_t padded = (n + 63) / 64 * 64;
    if (padded < n)
        return NULL;
    size_t limit = atomic_load(&mem_limit), used = atomic_load(&mem_used);
    if (limit && (used > limit || padded > limit - used))
        return refuse(padded, used);
    void *p = aligned_alloc(64, padded);
    if (!p)
        return NULL;
    size_t got = malloc_usable_size(p);
    size_t now = atomic_fetch_add(&mem_used, got) + got;
    if (limit && now > limit) { /* another thread took the room meanwhile */
        atomic_fetch_sub(&mem_used, got);
        free(p);
        return refuse(padded, now - got);
    }
    size_t pk = atomic_load(&mem_peak);
    while (now > pk && !atomic_compare_exchange_weak(&mem_peak, &pk, now))
        ;
    memset(p, 0, padded);
    return p;
}

void *kw_alloc_n(size_t count, size_t size)
{
    if (size && count > SIZE_MAX / size) {
        mem_refused = 0;
        return NULL;
    }
    size_t n = count * size;
    return kw_alloc(n ? n : 1);
}

void kw_free(void *p)
{
    if (!p)
        return;
    atomic_fetch_sub(&mem_used, malloc_usable_size(p));
    free(p);
}

int kw_alloc_refused_by_limit(void) { return mem_refused; }

kw_status kw_array_alloc(kw_array *a, kw_dtype t, int ndim, const size_t *dims)
{
    memset(a, 0, sizeof *a);
    size_t es = kw_dtype_size(t), bytes;
    KW_FAIL_IF(es == 0, KW_EINVAL, "array: unknown dtype %d", (int)t);
    kw_status st = kw_checked_bytes(dims, ndim, es, 0, &bytes);
    if (st)
        return st;
    a->dtype = t;
    a->ndim = ndim;
    for (int i = 0; i < ndim; i++)
        a->dims[i] = dims[i];
    if (bytes) {
        a->data = kw_alloc(bytes);
        KW_FAIL_PARAM(!a->data && kw_alloc_refused_by_limit(), KW_ENOMEM, "memory",
                      "an array of %.3g MiB would pass the allocation limit",
                      bytes / 1048576.0);
        KW_FAIL_IF(!a->data, KW_ENOMEM, "array: cannot allocate %.3g MiB",
                   bytes / 1048576.0);
    }
    return KW_OK;
}

void kw_array_free(kw_array *a)
{
    if (!a)
        return;
    kw_free(a->data);
    memset(a, 0, sizeof *a);
}

kw_status kw_array_all_finite(const kw_array *a)
{
    size_t n = kw_array_count(a);
    if (a->dtype == KW_F32) {
        const float *x = a->data;
        for (size_t i = 0; i < n; i++)
            KW_FAIL_IF(!isfinite(x[i]), KW_ENUMERIC,
                       "non-finite value at flat index %zu", i);
    } else if (a->dtype == KW_C64) {
        const float *x = a->data;
        for (size_t i = 0; i < 2 * n; i++)
            KW_FAIL_IF(!isfinite(x[i]), KW_ENUMERIC,
                       "non-finite value at flat index %zu", i / 2);
    }
    return KW_OK;
}
