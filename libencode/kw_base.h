/* kw_base.h: status codes, arrays, physical constants and progress callbacks
 * shared by every part of kweave.
 *
 * Conventions (docs/api.md, tested in tests/test_base.c and tests/ref/):
 *  - SI units inside: m, s, T, T/m, T/m/s, Hz, K.
 *  - Samples are `float complex` (C99), layout-compatible with fftwf_complex.
 *  - Arrays are C-ordered. Multi-coil k-space is (coils, ny, nx); 3-D Cartesian
 *    (coils, nz, ny, nx); non-Cartesian (coils, samples) with a trajectory
 *    (samples, ndim) in cycles per FOV, Cartesian points being -N/2 .. N/2-1.
 *  - The plain transform is the centered unitary DFT: k = 0 sits at index N/2.
 *  - Phantom coordinates [-1, 1] span the FOV; x to the right, y up (row 0 is
 *    the top of the picture).
 *  - The library never prints, exits or aborts: every call returns kw_status,
 *    and a failing call leaves a one-line reason in kw_last_error().
 */
#ifndef KW_BASE_H
#define KW_BASE_H

#include <stddef.h>
#include <stdint.h>

/* Complex samples: C99 `float complex` in C; in C++ std::complex<float>,
 * which the C++ standard makes layout-compatible with float[2] (and so with
 * C's float complex and fftwf_complex). The headers use these names only. */
#ifdef __cplusplus
#include <complex>
typedef std::complex<float> kw_cfloat;
typedef std::complex<double> kw_cdouble;
#else
#include <complex.h>
typedef float complex kw_cfloat;
typedef double complex kw_cdouble;
#endif

/* KW_API marks the library's public functions: the shared library exports
 * these and hides everything else (built with -fvisibility=hidden). */
#if defined(__GNUC__) && !defined(KW_STATIC_ONLY)
#define KW_API __attribute__((visibility("default")))
#else
#define KW_API
#endif

#ifdef __cplusplus
extern "C" {
#endif

#define KW_VERSION_MAJOR 0
#define KW_VERSION_MINOR 1
#define KW_VERSION_PATCH 0
#define KW_VERSION_STRING "0.1.0"

/*! kw_version(): the library's version at run time ("MAJOR.MINOR.PATCH");
 * compare with KW_VERSION_STRING to detect a header/library mismatch. The
 * shared library's SONAME carries the major number (libkweave.so.MAJOR). */
KW_API const char *kw_version(void);

/* The caution every report that touches gradient switching, RF or timing
 * carries (the command prints it; the JSON reports hold it under
 * "safety_caution"). */
#define KW_SAFETY_CAUTION                                                      \
    "Caution: gradient amplitude and slew-rate limits of the hardware are not "\
    "patient-safety limits; peripheral nerve stimulation and SAR are governed "\
    "by IEC 60601-2-33 and the scanner's own supervision. For research and "   \
    "planning only, not for diagnosis; defer to local rules and licensed "     \
    "practice."

/*! kw_safety_caution(): KW_SAFETY_CAUTION at run time (for bindings). */
KW_API const char *kw_safety_caution(void);

/* Fixed numbers: scripts and bindings may rely on them. */
typedef enum kw_status {
    KW_OK = 0,
    KW_EINVAL = 1,      /* an argument is missing, malformed or absurd */
    KW_ENOMEM = 2,      /* an allocation failed or a size overflowed */
    KW_ERANGE = 3,      /* a value lies outside the range the method supports */
    KW_EFORMAT = 4,     /* malformed input data (file contents, shapes) */
    KW_EIO = 5,         /* reading or writing failed (CLI layer only) */
    KW_ENOTSUP = 6,     /* a valid request the code does not support */
    KW_EINFEASIBLE = 7, /* the request violates a physical or hardware limit */
    KW_ENUMERIC = 8,    /* NaN/Inf data, singular or ill-conditioned system */
    KW_ECANCELLED = 9,  /* a progress callback asked to stop */
    KW_EINTERNAL = 10   /* a bug: an invariant was broken */
} kw_status;

/*! kw_strerror(): a short constant description of a status (never NULL). */
KW_API const char *kw_strerror(kw_status s);

/*! kw_last_error(): the one-line reason the last failing call on this thread
 * gave ("" if none). Valid until the next failing call on the same thread.
 * When the failure concerns one parameter, the line is "PARAM: REASON". */
KW_API const char *kw_last_error(void);

/*! kw_last_error_param(): the name of the parameter the last failure on this
 * thread concerns: a field of the call's options struct or argument, in the
 * library's own words (e.g. "lambda", "acs_lines", "sens"), or "" when the
 * failure names none. Front ends map it to their own option names;
 * kw_last_error_reason() gives the reason without the name. Both are valid
 * until the next failing call on the same thread. */
KW_API const char *kw_last_error_param(void);
KW_API const char *kw_last_error_reason(void);

/*! kw_set_error(): record a reason (printf format) and return `s`. Every
 * failure in the library passes through here: one breakpoint catches all.
 * The failure names no parameter (kw_last_error_param() is ""). */
KW_API kw_status kw_set_error(kw_status s, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/*! kw_set_error_param(): the same for a failure about one parameter: records
 * `param` apart and the line "param: reason". */
KW_API kw_status kw_set_error_param(kw_status s, const char *param, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

/*! kw_error_reparam(): name the parameter of the last failure anew, for a
 * call that passes a lower call's failure on in its own words. With `from`
 * NULL, any failure becomes "to: <the lower call's whole line>"; otherwise
 * only a failure naming `from` is renamed (its reason kept). Returns `st`;
 * does nothing when st is KW_OK. */
KW_API kw_status kw_error_reparam(kw_status st, const char *from, const char *to);

/*! kw_clear_error(): forget the last reason on this thread. */
KW_API void kw_clear_error(void);

/* KW_FAIL_IF: return `st` with a reason when `cond` holds. */
#define KW_FAIL_IF(cond, st, ...)                                              \
    do {                                                                       \
        if (cond)                                                              \
            return kw_set_error((st), __VA_ARGS__);                            \
    } while (0)

/* KW_FAIL_PARAM: the same for a failure about parameter `param` (a string
 * literal, the library's own name of the field). */
#define KW_FAIL_PARAM(cond, st, param, ...)                                    \
    do {                                                                       \
        if (cond)                                                              \
            return kw_set_error_param((st), (param), __VA_ARGS__);             \
    } while (0)

/* KW_FAIL_GOTO: the same for functions that must clean up: sets `var`. */
#define KW_FAIL_GOTO(cond, var, st, label, ...)                                \
    do {                                                                       \
        if (cond) {                                                            \
            (var) = kw_set_error((st), __VA_ARGS__);                           \
            goto label;                                                        \
        }                                                                      \
    } while (0)

/* ---- options structs ------------------------------------------------------
 * Every object's options struct starts with `size_t struct_size`, which its
 * kw_X_options_init() sets to sizeof the struct as the caller was compiled
 * (libpng's image.version): a library with more fields reads only what an
 * older caller has and takes its own defaults for the rest, so adding a
 * field never breaks a compiled caller. */

/*! kw_options_take(): copy a caller's options struct `src` (whose first
 * field is its struct_size) over `dst`, which the library has filled with
 * its defaults and whose size is `dst_size`. KW_EINVAL naming `what` when
 * src is NULL, was never initialised (struct_size 0 or under a size_t) or
 * is larger than the library's struct (a caller built against a newer
 * library). */
KW_API kw_status kw_options_take(void *dst, size_t dst_size, const void *src,
                                 const char *what);

/* ---- arrays ------------------------------------------------------------- */

#define KW_MAX_DIMS 8

typedef enum kw_dtype {
    KW_F32 = 1, /* float */
    KW_C64 = 2, /* float complex */
    KW_U8 = 3   /* uint8_t (masks) */
} kw_dtype;

/* An n-dimensional C-ordered array. The owner of `data` is whoever allocated
 * it: kw_array_alloc() arrays are freed with kw_array_free(). */
typedef struct kw_array {
    kw_dtype dtype;
    int ndim;
    size_t dims[KW_MAX_DIMS];
    void *data;
} kw_array;

/*! kw_dtype_size(): bytes per element (0 for an unknown dtype). */
KW_API size_t kw_dtype_size(kw_dtype t);

/*! kw_array_count(): number of elements (product of dims; 1 for ndim 0).
 * Returns 0 if the product overflows size_t. */
KW_API size_t kw_array_count(const kw_array *a);

/*! kw_checked_count(): product of n sizes times `elem` bytes, or KW_ENOMEM
 * (with a reason) when it overflows or exceeds `limit` bytes (0: no limit). */
KW_API kw_status kw_checked_bytes(const size_t *dims, int ndim, size_t elem,
                           size_t limit, size_t *bytes);

/*! kw_checked_whole(): the one checked conversion of a number read from a
 * file or an option into an integer: KW_OK and *out = v when `v` is a whole
 * number (finite) within [lo, hi]; KW_ERANGE (out untouched, no message: the
 * caller names the field) otherwise. The comparison is made in double before
 * any cast, so 1e300, NaN or 2^63 never reach a conversion. */
KW_API kw_status kw_checked_whole(double v, long long lo, long long hi, long long *out);

/*! kw_array_alloc(): allocate a zero-filled array (64-byte aligned, suitable
 * for FFTW's SIMD). `a` is overwritten; free with kw_array_free(). */
KW_API kw_status kw_array_alloc(kw_array *a, kw_dtype t, int ndim, const size_t *dims);

/*! kw_array_free(): free the data and reset `a` (NULL-safe, idempotent). */
KW_API void kw_array_free(kw_array *a);

/*! kw_alloc(): 64-byte aligned, zeroed allocation of n bytes (NULL on
 * failure, on passing the limit below, or for n == 0); kw_free() releases it
 * (NULL-safe). A pointer from kw_alloc() / kw_alloc_n() goes to kw_free()
 * and nowhere else (free() would leave its bytes counted), and kw_free()
 * takes nothing else. Every pointer the library hands over for the caller
 * to release (JSON text, ...) is of this kind. */
KW_API void *kw_alloc(size_t n);
KW_API void kw_free(void *p);

/*! kw_alloc_n(): kw_alloc() of count x size bytes, like calloc(): NULL when
 * the product overflows (not counted as a refusal), a valid (minimal) block
 * when it is 0. */
KW_API void *kw_alloc_n(size_t count, size_t size);

/*! The process's allocation budget. Every buffer the library holds (arrays,
 * images, k-space, masks, trajectories, grids, NUFFT tables, operator and
 * solver work space, coil fits, field-map tables, PSF and metrics buffers,
 * and the objects themselves) comes from kw_alloc(), which counts it; with a
 * limit set, an allocation that would pass it returns NULL and the call
 * fails with KW_ENOMEM (kw_array_alloc() names the parameter "memory").
 * Not counted: FFTW's plans and its own buffers, cJSON's working copies and
 * the C library's own memory (a few KiB to MiB, independent of the limit).
 * kw_memory_set_limit(0) (the default) means no limit; a limit lowered
 * below what is held refuses every later allocation and frees nothing.
 * Thread-safe. kw_memory_in_use() / kw_memory_peak(): bytes held now and at
 * most (the allocator's block sizes). kw_alloc_refused_by_limit(): nonzero
 * when this thread's last kw_alloc() returned NULL because of the limit.
 * kw_memory_refusals(): how many kw_alloc() calls the limit has refused in
 * this process, in any thread; *asked and *held (either may be NULL) get
 * the size of the last refused request and the bytes held when it came.
 * kw_memory_reset_peak(): start a new peak at what is held now (to measure
 * one phase of a run). */
KW_API void kw_memory_set_limit(size_t bytes);
KW_API size_t kw_memory_limit(void);
KW_API size_t kw_memory_in_use(void);
KW_API size_t kw_memory_peak(void);
KW_API void kw_memory_reset_peak(void);
KW_API int kw_alloc_refused_by_limit(void);
KW_API size_t kw_memory_refusals(size_t *asked, size_t *held);

/*! kw_array_all_finite(): KW_OK if every value is finite, else KW_ENUMERIC
 * with the index of the first bad value in the reason. */
KW_API kw_status kw_array_all_finite(const kw_array *a);

/* ---- physical constants (SI) --------------------------------------------- */

/* Proton gyromagnetic ratio, CODATA 2018 recommended values:
 * gamma_p = 2.675 221 8744e8 rad s^-1 T^-1, gamma_p / 2pi = 42.577 478 518 MHz/T. */
#define KW_GAMMA_P 2.6752218744e8
#define KW_GAMMA_BAR_P 42.577478518e6
/* Exact SI 2019 defining constants. */
#define KW_BOLTZMANN 1.380649e-23
#define KW_PLANCK 6.62607015e-34
#define KW_HBAR (KW_PLANCK / (2.0 * 3.14159265358979323846))
/* Vacuum permeability, CODATA 2018: 1.256 637 062 12e-6 N A^-2. */
#define KW_MU0 1.25663706212e-6
#define KW_PI 3.14159265358979323846

/* ---- progress ------------------------------------------------------------ */

typedef struct kw_progress {
    const char *stage; /* short constant label, e.g. "cg" */
    int iter;          /* current iteration (1-based), or 0 if none */
    int niter;         /* planned iterations, or 0 if unknown */
    double residual;   /* relative residual or objective, NaN if none */
    const char *residual_name; /* what `residual` is, in the words of the
                                  reports: "residual" (CG), "change" (the
                                  relative change of FISTA and ADMM), or NULL */
} kw_progress;

/* Return nonzero to cancel: the call then returns KW_ECANCELLED. */
typedef int (*kw_progress_fn)(void *user, const kw_progress *p);

#ifdef __cplusplus
}
#endif
#endif /* KW_BASE_H */
