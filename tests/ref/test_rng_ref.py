"""kw_rng against an independent Python transcription of xoshiro256** 1.0 and
splitmix64 as published by Blackman & Vigna (2018) (prng.di.unimi.it): the
same seed gives the same 64-bit stream, so masks and noise are identical on
every machine."""
import ctypes

M = (1 << 64) - 1


def splitmix64(x):
    x = (x + 0x9E3779B97F4A7C15) & M
    z = x
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M
    return x, z ^ (z >> 31)


def rotl(x, k):
    return ((x << k) | (x >> (64 - k))) & M


def xoshiro_stream(seed, n):
    x, s = seed, []
    for _ in range(4):
        x, v = splitmix64(x)
        s.append(v)
    out = []
    for _ in range(n):
        out.append((rotl((s[1] * 5) & M, 7) * 9) & M)
        t = (s[1] << 17) & M
        s[2] ^= s[0]; s[3] ^= s[1]; s[1] ^= s[2]; s[0] ^= s[3]; s[2] ^= t
        s[3] = rotl(s[3], 45)
    return out


class Rng(ctypes.Structure):
    _fields_ = [("s", ctypes.c_uint64 * 4), ("have_spare", ctypes.c_int), ("spare", ctypes.c_double)]


def test_stream_matches_reference(lib):
    lib.kw_rng_u64.restype = ctypes.c_uint64
    for seed in (0, 1, 42, 2**63 + 5):
        r = Rng()
        lib.kw_rng_seed(ctypes.byref(r), ctypes.c_uint64(seed))
        got = [lib.kw_rng_u64(ctypes.byref(r)) for _ in range(20)]
        assert got == xoshiro_stream(seed, 20)
