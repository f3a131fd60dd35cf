// cxx_include.cpp: every public header of libkweave compiles as C++ (through
// the umbrella kweave.h, made by make from the list of public headers), and a
// C++ caller passes std::complex<float> arrays to the C library.
//
// Checks: the run-time version equals the header's; kw_cfloat is the size of
// two floats (the C++ standard's layout guarantee for std::complex, [complex.numbers]);
// the centered unitary inverse DFT of a unit impulse at k = 0 (index N/2) is
// the constant 1/sqrt(N) (definition of the unitary DFT, docs/api.md's
// convention); a failing call leaves a reason naming its parameter.
#include "kweave.h"

#include <cmath>
#include <complex>
#include <cstdio>
#include <cstring>
#include <vector>

static int fails = 0;
#define CHECK(c)                                                              \
    do {                                                                      \
        if (!(c)) {                                                           \
            std::fprintf(stderr, "cxx_include: failed: %s (line %d)\n", #c, __LINE__); \
            fails++;                                                          \
        }                                                                     \
    } while (0)

int main()
{
    CHECK(std::strcmp(kw_version(), KW_VERSION_STRING) == 0);
    CHECK(sizeof(kw_cfloat) == 2 * sizeof(float));

    const size_t n[2] = {6, 8};
    kw_fft_plan *plan = nullptr;
    CHECK(kw_fft_create(&plan, 2, n, 1, KW_FFT_ESTIMATE) == KW_OK);
    std::vector<kw_cfloat> x(n[0] * n[1], kw_cfloat(0.0f, 0.0f));
    x[(n[0] / 2) * n[1] + n[1] / 2] = kw_cfloat(1.0f, 0.0f);
    CHECK(kw_fft_inverse(plan, x.data()) == KW_OK);
    const double want = 1.0 / std::sqrt(48.0);
    double worst = 0;
    for (const kw_cfloat &v : x)
        worst = std::fmax(worst, std::abs(std::complex<double>(v) - want));
    CHECK(worst < 1e-6);
    kw_fft_destroy(plan);

    kw_options_take(nullptr, 16, nullptr, "opts");
    CHECK(std::strcmp(kw_last_error_param(), "opts") == 0);
    CHECK(std::strncmp(kw_last_error(), "opts: ", 6) == 0);
    CHECK(std::strcmp(kw_last_error_reason(), kw_last_error() + 6) == 0);

    std::printf("cxx_include: %s, %d failed\n", fails ? "FAILED" : "ok", fails);
    return fails ? 1 : 0;
}
