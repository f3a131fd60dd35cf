"""The simulation's grid path (issue 19) against the per-sample path and
against an independent numpy evaluation of the analytic transforms.

kw_sim (libencode/kw_simulate.h) is driven through ctypes: the grid path
(per_sample = 0, the default) and the per-sample path (per_sample = 1, the
exact evaluation at every sample that every run took before) must agree
within 1e-6 of the largest sample, over 2-D and 3-D phantoms, masks, time
classes (relaxation and chemical shift during a readout), per-sample times,
a period whose shifts share no grid points, and several thread counts.

The numpy reference evaluates the k-space of (coil series x phantom) from
the closed forms, independently of the library's code:
  ellipse with semi-axes a, b: a b J1(2 pi q) / q, q = |(a fu, b fv)|
    (the unit disk's transform J1(2 pi rho)/rho, Bracewell, "The Fourier
    Transform and Its Applications", 3rd ed., ch. 13 (jinc), scaled by the
    similarity theorem);
  rectangle of half-widths a, b: 4 a b sinc(2 a fu) sinc(2 b fv), a box
    8 a b c sinc(2 a fu) sinc(2 b fv) sinc(2 c fz) (the transform of the
    rectangle function, Bracewell ch. 4; numpy.sinc = sin(pi x)/(pi x));
  ellipsoid: 4 pi a b c j1(2 pi q) / (2 pi q), j1 the spherical Bessel
    function (the unit ball's transform, Bracewell ch. 13; scipy's
    spherical_jn);
  a centre c multiplies by exp(-i 2 pi f.c) (the shift theorem), and the
  coil's series sum_pq c_pq exp(i 2 pi (p u + q v)/P) turns the sample at k
  into sum_pq c_pq F(k - (p, q)/P) (the modulation theorem).
"""
import ctypes as C

import numpy as np
import pytest
from scipy.special import j1, spherical_jn


MAX_SHAPES = 64


class Shape(C.Structure):
    _fields_ = [("kind", C.c_int), ("center", C.c_double * 3), ("axes", C.c_double * 3),
                ("angle", C.c_double), ("value", C.c_double), ("tissue", C.c_int),
                ("parent", C.c_int), ("df_hz", C.c_double)]


class Phantom(C.Structure):
    _fields_ = [("name", C.c_char * 32), ("ndim", C.c_int), ("tissue", C.c_int),
                ("nshapes", C.c_int), ("shapes", Shape * MAX_SHAPES)]


class Contrast(C.Structure):
    _fields_ = [("seq", C.c_int), ("b0_t", C.c_double), ("te_s", C.c_double),
                ("tr_s", C.c_double), ("ti_s", C.c_double), ("flip_rad", C.c_double)]


class SimOptions(C.Structure):
    _fields_ = [("struct_size", C.c_size_t), ("phantom", C.POINTER(Phantom)),
                ("n", C.c_size_t * 3), ("traj", C.c_void_p), ("nsamples", C.c_size_t),
                ("traj_ndim", C.c_int), ("mask", C.c_void_p), ("times", C.c_void_p),
                ("times_per_sample", C.c_int), ("bandwidth_hz", C.c_double),
                ("contrast", Contrast), ("tissue_values", C.c_void_p), ("df_hz", C.c_double),
                ("df_grad_hz", C.c_double * 3), ("ncoils", C.c_int), ("coil_order", C.c_int),
                ("coil_order_z", C.c_int), ("coil_period", C.c_double), ("coil_coef", C.c_void_p),
                ("noise_chol", C.c_void_p), ("seed", C.c_uint64), ("per_sample", C.c_int)]


KIND = {"ellipse": 0, "rect": 1, "ellipsoid": 2, "box": 3}


def bind(lib):
    """A private handle with this file's argument types: set on the session's
    shared handle they would leak into other files' calls (kw_phantom_make
    takes a buffer there)."""
    lib = C.CDLL(lib._name)
    lib.kw_sim_create.argtypes = [C.POINTER(C.c_void_p), C.POINTER(SimOptions)]
    lib.kw_sim_execute.argtypes = [C.c_void_p, C.c_void_p, C.c_void_p, C.c_void_p]
    lib.kw_sim_destroy.argtypes = [C.c_void_p]
    lib.kw_sim_uses_grid.argtypes = [C.c_void_p]
    lib.kw_sim_output_count.argtypes = [C.c_void_p]
    lib.kw_sim_output_count.restype = C.c_size_t
    lib.kw_sim_channels.argtypes = [C.c_void_p]
    lib.kw_last_error.restype = C.c_char_p
    lib.kw_phantom_make.argtypes = [C.POINTER(Phantom), C.c_char_p]
    lib.kw_sim_options_init.argtypes = [C.POINTER(SimOptions)]
    return lib


def options(lib, ph, n, coef=None, L=0, Lz=0, period=1.5, **kw):
    o = SimOptions()
    lib.kw_sim_options_init(C.byref(o))
    assert o.struct_size == C.sizeof(SimOptions), "kw_sim_options layout"
    o.phantom = C.pointer(ph)
    for d in range(3):
        o.n[d] = n[d]
    keep = []
    if coef is not None:
        c = np.ascontiguousarray(coef, np.complex128)
        keep.append(c)
        o.ncoils = c.shape[0]
        o.coil_order, o.coil_order_z, o.coil_period = L, Lz, period
        o.coil_coef = c.ctypes.data
    for k, v in kw.items():
        if isinstance(v, np.ndarray):
            keep.append(v)
            setattr(o, k, v.ctypes.data)
        elif k == "contrast":
            o.contrast = v
        else:
            setattr(o, k, v)
    return o, keep


def simulate(lib, o, per_sample):
    """k-space (channels, count) and whether the grid path ran."""
    o.per_sample = per_sample
    sim = C.c_void_p()
    st = lib.kw_sim_create(C.byref(sim), C.byref(o))
    assert st == 0, lib.kw_last_error()
    try:
        out = np.zeros((lib.kw_sim_channels(sim), lib.kw_sim_output_count(sim)), np.complex64)
        grid = lib.kw_sim_uses_grid(sim)
        assert lib.kw_sim_execute(sim, out.ctypes.data, None, None) == 0, lib.kw_last_error()
    finally:
        lib.kw_sim_destroy(sim)
    return out, grid


def relmax(new, ref):
    return np.abs(new.astype(np.complex128) - ref).max() / np.abs(ref).max()


def series(rng, ncoils, terms):
    """Random coil coefficients, decaying with the term index like a fit's."""
    c = rng.normal(size=(ncoils, terms)) + 1j * rng.normal(size=(ncoils, terms))
    return c / (1 + np.arange(terms))[None, :] ** 0.5


def made(lib, name):
    ph = Phantom()
    assert lib.kw_phantom_make(C.byref(ph), name.encode()) == 0
    return ph


CASES = ["sl-2d", "weave-gre-bandwidth", "weave-epi-times-mask", "weave3d", "period-1.37",
         "sl-mask-order8", "odd-sizes-3d", "period-3-and-order-z-only"]


@pytest.mark.parametrize("case", CASES)
def test_grid_path_equals_per_sample_path(lib, case):
    lib = bind(lib)
    rng = np.random.default_rng(CASES.index(case) + 1)
    gre = Contrast(1, 3.0, 0.02, 0.1, 0.0, np.deg2rad(30))  # KW_CONTRAST_GRE
    kw = {}
    if case == "sl-2d":
        ph, n, L, Lz, P = made(lib, "shepp-logan-modified"), (1, 48, 64), 4, 0, 1.5
    elif case == "weave-gre-bandwidth":
        ph, n, L, Lz, P = made(lib, "weave"), (1, 40, 48), 3, 0, 1.5
        kw = dict(contrast=gre, bandwidth_hz=32e3, df_hz=40.0)
    elif case == "weave-epi-times-mask":
        ph, n, L, Lz, P = made(lib, "weave"), (1, 32, 32), 2, 0, 1.5
        t = 0.02 + (np.arange(32 * 32).reshape(32, 32) - 512) * 2e-6
        mask = (rng.random((32, 32)) < 0.5).astype(np.uint8)
        kw = dict(contrast=gre, times=np.ascontiguousarray(t.ravel()), times_per_sample=1,
                  mask=np.ascontiguousarray(mask.ravel()))
    elif case == "weave3d":
        ph, n, L, Lz, P = made(lib, "weave3d"), (12, 16, 20), 2, 1, 1.5
        kw = dict(contrast=gre, bandwidth_hz=20e3)
    elif case == "period-1.37":
        ph, n, L, Lz, P = made(lib, "shepp-logan"), (1, 24, 28), 3, 0, 1.37
    elif case == "odd-sizes-3d":
        ph, n, L, Lz, P = made(lib, "weave3d"), (9, 11, 13), 2, 1, 1.5
        kw = dict(contrast=Contrast(0, 3.0, 0, 0, 0, 0))
    elif case == "period-3-and-order-z-only":
        ph, n, L, Lz, P = made(lib, "weave3d"), (6, 5, 7), 0, 2, 3.0
        kw = dict(contrast=gre, bandwidth_hz=10e3)
    else:
        ph, n, L, Lz, P = made(lib, "shepp-logan-modified"), (1, 36, 36), 8, 0, 1.5
        mask = np.zeros((36, 36), np.uint8)
        mask[::3] = 1
        mask[14:22] = 1
        kw = dict(mask=np.ascontiguousarray(mask.ravel()))
    terms = (2 * Lz + 1) * (2 * L + 1) ** 2
    o, keep = options(lib, ph, n, series(rng, 3, terms), L, Lz, P, **kw)
    ref, g0 = simulate(lib, o, 1)
    new, g1 = simulate(lib, o, 0)
    assert (g0, g1) == (0, 1)
    assert relmax(new, ref) <= 1e-6
    if "mask" in kw:
        # unsampled points stay zero
        assert not np.any(new[:, kw["mask"] == 0])


def test_grid_path_thread_counts_bit_identical(lib):
    """docs/api.md: results are bit-identical for any thread count."""
    lib = bind(lib)
    omp = C.CDLL("libgomp.so.1")
    ph = made(lib, "weave")
    rng = np.random.default_rng(7)
    o, keep = options(lib, ph, (1, 40, 40), series(rng, 4, 49), 3, 0, 1.5,
                      contrast=Contrast(1, 3.0, 0.02, 0.1, 0.0, 0.5), bandwidth_hz=30e3)
    outs = []
    for nt in (1, 3):
        omp.omp_set_num_threads(nt)
        outs.append(simulate(lib, o, 0)[0])
    omp.omp_set_num_threads(2)
    assert np.array_equal(outs[0], outs[1])


def test_path_choice(lib):
    """A trajectory, a field gradient and no coils take the per-sample path."""
    lib = bind(lib)
    ph = made(lib, "shepp-logan")
    rng = np.random.default_rng(3)
    coef = series(rng, 2, 9)
    traj = np.ascontiguousarray(rng.uniform(-8, 8, (50, 2)).astype(np.float32))
    cases = [({}, 1, coef), (dict(traj=traj, nsamples=50, traj_ndim=2), 0, coef),
             (dict(df_grad_hz=(C.c_double * 3)(10.0, 0.0, 0.0)), 0, coef), ({}, 0, None)]
    for kw, want, cf in cases:
        o, keep = options(lib, ph, (1, 16, 16), cf, 1, 0, 1.5, **kw)
        assert simulate(lib, o, 0)[1] == want, kw.keys()


# ---- the independent evaluation ---------------------------------------------

def numpy_kspace(shapes, n, coef, L, Lz, P):
    """Samples of (series x phantom) on the Cartesian grid n = (nz, ny, nx):
    coef (coils, terms); shapes: dicts kind, center, axes, angle, value."""
    nz, ny, nx = n
    dim3 = nz > 1
    kz, ky, kx = np.meshgrid(np.arange(nz) - nz // 2 if dim3 else np.zeros(1),
                             np.arange(ny) - ny // 2, np.arange(nx) - nx // 2, indexing="ij")
    scale = np.sqrt(nx * ny) * 0.25 * (np.sqrt(nz) * 0.5 if dim3 else 1.0)
    side = 2 * L + 1
    out = np.zeros((coef.shape[0], nz, ny, nx), np.complex128)
    for r in range(-Lz, Lz + 1):
        for q in range(-L, L + 1):
            for p in range(-L, L + 1):
                # phantom frequency at k - (p, q, r)/P: (kx/2, -ky/2, kz/2)
                fx, fy, fz = 0.5 * (kx - p / P), -0.5 * (ky - q / P), 0.5 * (kz - r / P)
                F = np.zeros(kx.shape, np.complex128)
                for s in shapes:
                    ca, sa = np.cos(s["angle"]), np.sin(s["angle"])
                    fu, fv = fx * ca + fy * sa, -fx * sa + fy * ca
                    a, b, c = s["axes"]
                    if s["kind"] == "ellipse":
                        qq = np.hypot(a * fu, b * fv)
                        qs = np.where(qq > 0, qq, 1.0)
                        A = np.where(qq > 0, a * b * j1(2 * np.pi * qs) / qs, np.pi * a * b)
                    elif s["kind"] == "rect":
                        A = 4 * a * b * np.sinc(2 * a * fu) * np.sinc(2 * b * fv)
                    elif s["kind"] == "box":
                        A = 8 * a * b * c * np.sinc(2 * a * fu) * np.sinc(2 * b * fv) * np.sinc(2 * c * fz)
                    else:
                        z = 2 * np.pi * np.sqrt((a * fu) ** 2 + (b * fv) ** 2 + (c * fz) ** 2)
                        zs = np.where(z > 0, z, 1.0)
                        A = 4 * np.pi * a * b * c * np.where(z > 0, spherical_jn(1, zs) / zs, 1 / 3)
                    cx, cy, cz = s["center"]
                    F += s["value"] * A * np.exp(-2j * np.pi * (fx * cx + fy * cy + fz * cz))
                j = ((r + Lz) * side + (q + L)) * side + (p + L)
                out += coef[:, j, None, None, None] * F[None]
    return scale * out


def phantom_of(shapes, ndim):
    ph = Phantom()
    ph.ndim, ph.nshapes = ndim, len(shapes)
    for i, s in enumerate(shapes):
        sh = ph.shapes[i]
        sh.kind = KIND[s["kind"]]
        for d in range(3):
            sh.center[d] = s["center"][d]
            sh.axes[d] = s["axes"][d]
        sh.angle, sh.value, sh.tissue, sh.parent = s["angle"], s["value"], -1, -1
    return ph


def test_grid_path_against_numpy_2d(lib):
    """Ellipses (one rotated) and a rotated and an aligned rectangle times a
    random order-2 series, 20 x 24 samples, period 1.5."""
    lib = bind(lib)
    shapes = [dict(kind="ellipse", center=(0.05, -0.02, 0), axes=(0.7, 0.8, 0), angle=0.0, value=1.0),
              dict(kind="ellipse", center=(0.2, 0.1, 0), axes=(0.15, 0.3, 0), angle=0.4, value=-0.4),
              dict(kind="rect", center=(-0.3, 0.2, 0), axes=(0.1, 0.2, 0), angle=0.0, value=0.3),
              dict(kind="rect", center=(0.0, -0.4, 0), axes=(0.12, 0.05, 0), angle=-0.3, value=0.2)]
    rng = np.random.default_rng(11)
    L, n = 2, (1, 20, 24)
    coef = series(rng, 3, (2 * L + 1) ** 2)
    o, keep = options(lib, phantom_of(shapes, 2), n, coef, L, 0, 1.5)
    new, grid = simulate(lib, o, 0)
    assert grid == 1
    ref = numpy_kspace(shapes, n, coef, L, 0, 1.5).reshape(3, -1)
    assert relmax(new, ref) <= 1e-6


def test_grid_path_against_numpy_3d(lib):
    """Ellipsoids and a box times a random series of orders 1 (x, y) and 1
    (z), 10 x 12 x 14 samples."""
    lib = bind(lib)
    shapes = [dict(kind="ellipsoid", center=(0, 0.05, -0.1), axes=(0.7, 0.6, 0.8), angle=0.0, value=1.0),
              dict(kind="ellipsoid", center=(0.3, -0.2, 0.1), axes=(0.2, 0.1, 0.3), angle=0.5, value=0.5),
              dict(kind="box", center=(-0.2, 0.2, 0.0), axes=(0.1, 0.15, 0.2), angle=0.0, value=-0.3)]
    rng = np.random.default_rng(12)
    L, Lz, n = 1, 1, (10, 12, 14)
    coef = series(rng, 2, (2 * Lz + 1) * (2 * L + 1) ** 2)
    o, keep = options(lib, phantom_of(shapes, 3), n, coef, L, Lz, 1.5)
    new, grid = simulate(lib, o, 0)
    assert grid == 1
    ref = numpy_kspace(shapes, n, coef, L, Lz, 1.5).reshape(2, -1)
    assert relmax(new, ref) <= 1e-6
