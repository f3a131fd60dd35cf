#!/usr/bin/python3
"""kweave benchmarks, side by side with their peers on the same input.

Run by `make bench` (under /usr/bin/python3 for numpy and scipy). Each case
is timed in one process beside its peer, interleaved repetition by
repetition with the order rotated, and reported as the median, min and max of
the repetition-by-repetition ratios (the machine is shared and noisy: a
slow moment hits both sides of one ratio). The floor of a Cartesian case is
the faster of the plain batched FFTW plans (in place, or out of place allowed
to destroy its input; FFTW_MEASURE), timed by kw_bench in C; scipy.fft and
numpy.fft are timed here against kweave called through ctypes. Results go to
bench/results.json with the machine's description. Timings are benchmarks,
never tests.
"""
import ctypes
import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np
import scipy
import scipy.fft

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)


def machine():
    model = "unknown"
    try:
        for line in open("/proc/cpuinfo"):
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = 0
    try:
        for line in open("/proc/meminfo"):
            if line.startswith("MemTotal"):
                mem = int(line.split()[1]) * 1024
    except OSError:
        pass
    return {"cpu": model, "cores": os.cpu_count(), "memory_bytes": mem,
            "system": platform.platform(), "numpy": np.__version__, "scipy": scipy.__version__}


def stats(ts):
    ts = sorted(ts)
    return {"median_ms": statistics.median(ts), "min_ms": ts[0], "max_ms": ts[-1], "reps": len(ts)}


class KwRss:
    """kweave's fused RSS recon called in this process (libkweave.so)."""

    def __init__(self, lib, shape):
        self.lib = lib
        dims = (ctypes.c_size_t * 3)(*shape[1:])
        self.h = ctypes.c_void_p()
        if lib.kw_rssrecon_create(ctypes.byref(self.h), len(shape) - 1, dims,
                                  ctypes.c_size_t(shape[0]), 1) != 0:
            raise RuntimeError("kw_rssrecon_create failed")
        self.img = np.zeros(shape[1:], np.float32)

    def __call__(self, x):
        if self.lib.kw_rssrecon_execute(self.h, x.ctypes.data_as(ctypes.c_void_p),
                                        self.img.ctypes.data_as(ctypes.c_void_p)) != 0:
            raise RuntimeError("kw_rssrecon_execute failed")
        return self.img

    def close(self):
        self.lib.kw_rssrecon_destroy(self.h)


def interleaved(fns, reps):
    """Times of each function, run in turn with the order rotated every
    repetition (one warm-up round first)."""
    ts = [[] for _ in fns]
    for r in range(-1, reps):
        for j in range(len(fns)):
            i = (j + max(r, 0)) % len(fns)
            t0 = time.perf_counter()
            fns[i]()
            dt = (time.perf_counter() - t0) * 1e3
            if r >= 0:
                ts[i].append(dt)
    return ts


def ratio_stats(num, den):
    q = sorted(a / b for a, b in zip(num, den))
    return {"median": statistics.median(q), "min": q[0], "max": q[-1]}


def rss_numpy(x):
    ax = tuple(range(1, x.ndim))
    y = np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho"), axes=ax)
    return np.sqrt(np.sum(np.abs(y) ** 2, axis=0)).astype(np.float32)


def rss_scipy(x, workers):
    ax = tuple(range(1, x.ndim))
    y = scipy.fft.fftshift(scipy.fft.ifftn(scipy.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho",
                                           workers=workers), axes=ax)
    return np.sqrt(np.sum(y.real ** 2 + y.imag ** 2, axis=0))


PY_PROCESS = r"""
import sys, numpy as np
x = np.load(sys.argv[1])
ax = tuple(range(1, x.ndim))
y = np.fft.fftshift(np.fft.ifftn(np.fft.ifftshift(x, axes=ax), axes=ax, norm="ortho"), axes=ax)
np.save(sys.argv[2], np.sqrt(np.sum(np.abs(y) ** 2, axis=0)).astype(np.float32))
"""


def process_runs(build, cmd, reps, env=None):
    """Wall time and peak resident memory of whole processes, measured by
    kw_bench run (a small C parent: a child forked from this Python process
    would inherit its resident pages into ru_maxrss)."""
    out = subprocess.run([os.path.join(build, "kw_bench"), "run", str(reps), *cmd],
                         capture_output=True, text=True, check=True, env=env).stdout
    r = json.loads(out.strip().splitlines()[-1])
    return {k: r[k] for k in ("median_ms", "min_ms", "max_ms", "reps", "peak_rss_bytes")}


def fmt(r):
    return f"{r['median_ms']:9.2f} ms [{r['min_ms']:.2f}-{r['max_ms']:.2f}]"


def bench_rss(build, tmp, results, ratios, q, env1):
    """The Cartesian RSS cases: kweave against its FFTW floor (kw_bench, in C)
    and against scipy.fft and numpy.fft (here, through ctypes)."""
    lib = ctypes.CDLL(os.path.join(build, "libkweave.so"))
    lib.kw_fft_setup(1)
    kweave = os.path.join(build, "kweave")
    rng = np.random.default_rng(2026)
    # (label, shape, C repetitions, Python repetitions, floor target, scipy target)
    cases = [("32 x 256^2", (32, 256, 256), 60 // q, 12 // q, 1.15, None),
             ("8 x 512^2", (8, 512, 512), 60 // q, 12 // q, 1.15, 3.0),
             ("1 x 256^2", (1, 256, 256), 600 // q, 200 // q, 1.25, 2.0)]
    for label, shape, reps, preps, tfloor, tscipy in cases:
        x = (rng.standard_normal(shape, dtype=np.float32)
             + 1j * rng.standard_normal(shape, dtype=np.float32)).astype(np.complex64)
        assert x.ctypes.data % 16 == 0
        path = os.path.join(tmp, "ks.npy")
        np.save(path, x)
        r = kwb(build, "rss", path, 1, reps)
        r["label"] = label
        r["target_ratio_to_floor"] = tfloor
        results["rss"].append(r)
        ratios.append((f"RSS {label}, 1 thread", "FFTW floor (" + r["floor_plan"] + ")",
                       r["kweave_ms"], r["floor_ms"], r["ratio_to_floor"], f"<= {tfloor}x floor"))
        ratios.append((f"RSS {label}, 1 thread, CPU time", "FFTW floor, CPU time",
                       r["kweave_cpu_ms"], r["floor_cpu_ms"], r["cpu_ratio_to_floor"],
                       f"<= {tfloor}x floor"))
        kw = KwRss(lib, shape)
        ref = rss_scipy(x, 1)
        assert np.allclose(kw(x), ref, rtol=1e-4, atol=1e-4 * float(ref.max()))
        tk, ts, tn = interleaved([lambda: kw(x), lambda: rss_scipy(x, 1), lambda: rss_numpy(x)],
                                 preps)
        kw.close()
        for name, tp, target in (("scipy.fft complex64", ts, tscipy), ("numpy.fft", tn, None)):
            st = ratio_stats(tp, tk)
            results["rss_python"].append({"label": label, "peer": name, "reps": preps,
                                          "kweave_ms": summary(tk), "peer_ms": summary(tp),
                                          "speedup": st, "target_speedup": target})
            ratios.append((f"RSS {label}, 1 thread", name, summary(tk), summary(tp), st,
                           f">= {target}x faster" if target else ""))
        if shape == (1, 256, 256):  # one image through FFTW's threads
            r2 = kwb(build, "rss", path, 2, reps)
            r2["label"] = label
            results["rss"].append(r2)
            ratios.append((f"RSS {label}, 2 threads", "FFTW floor, 2 threads", r2["kweave_ms"],
                           r2["floor_ms"], r2["ratio_to_floor"], ""))
        if shape == (32, 256, 256):  # the whole process, file to file
            out = os.path.join(tmp, "img.npy")
            k = process_runs(build, [kweave, "recon", "--in", path, "--out", out, "--quiet"],
                             max(3, 10 // q), env=env1)
            py = process_runs(build, [sys.executable, "-c", PY_PROCESS, path, out], max(3, 10 // q))
            results["process"] = {"label": label, "kweave": k, "numpy_script": py}


def summary(ts):
    ts = sorted(ts)
    return {"median": statistics.median(ts), "min": ts[0], "max": ts[-1]}


def kwb(build, *a):
    out = subprocess.run([os.path.join(build, "kw_bench"), *map(str, a)],
                         capture_output=True, text=True, check=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def rng3(d):
    return f"{d['median']:.3f} [{d['min']:.3f}-{d['max']:.3f}]"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--build", default=os.path.join(ROOT, "build"))
    ap.add_argument("--quick", action="store_true", help="fewer repetitions")
    ap.add_argument("--only", default="rss,iter,memory,nufft,sweep",
                    help="comma-separated parts to run (default: all)")
    args = ap.parse_args()
    parts = set(args.only.split(","))
    build = os.path.abspath(args.build)
    kweave = os.path.join(build, "kweave")
    q = 3 if args.quick else 1
    rows, ratios = [], []
    results = {"machine": machine(), "cases": [], "rss": [], "rss_python": []}

    def row(name, kw, peer_name, peer, target=None):
        ratio = peer["median_ms"] / kw["median_ms"]
        rows.append((name, fmt(kw), peer_name, fmt(peer), ratio, target))
        results["cases"].append({"case": name, "kweave": kw, "peer": peer_name,
                                 "peer_result": peer, "speedup_vs_peer": ratio, "target": target})

    with tempfile.TemporaryDirectory(prefix="kweave-bench-") as tmp:
        env1 = dict(os.environ, OMP_NUM_THREADS="1", KWEAVE_WISDOM=os.path.join(tmp, "wisdom"))
        if "rss" in parts:
            bench_rss(build, tmp, results, ratios, q, env1)
        if "iter" in parts:
            r = kwb(build, "iter", 256, 8, 1, 7 if not args.quick else 3)
            results["iteration"] = r
            ratios.append(("CG-SENSE iteration 8 x 256^2", "2 FFTs per coil", r["cg_ms"],
                           r["floor_ms"], r["cg_ratio_to_floor"], "<= 1.3x floor"))
            ratios.append(("FISTA (db4) iteration 8 x 256^2", "2 FFTs per coil", r["fista_ms"],
                           r["floor_ms"], r["fista_ratio_to_floor"], "<= 1.8x floor"))
        if "memory" in parts:
            g = np.random.default_rng(7)
            x = (g.standard_normal((8, 128, 128, 128), dtype=np.float32)
                 + 1j * g.standard_normal((8, 128, 128, 128), dtype=np.float32)).astype(np.complex64)
            path = os.path.join(tmp, "ks3.npy")
            np.save(path, x)
            out = os.path.join(tmp, "img3.npy")
            k = process_runs(build, [kweave, "recon", "--in", path, "--out", out, "--quiet"], 3,
                             env=env1)
            inout = x.nbytes + x[0].real.nbytes
            limit = 2 * inout + 30 * 2**20
            results["memory"] = {"case": "kweave recon 8 x 128^3", "peak_rss_bytes": k["peak_rss_bytes"],
                                 "input_plus_output_bytes": inout, "limit_bytes": limit,
                                 "ok": k["peak_rss_bytes"] <= limit}
        # NUFFT: 8 coils through one plan, uniformly random samples; the peer
        # is kweave's exact NDFT (double) on the same samples.
        nreps = 5 if not args.quick else 2
        if "nufft" in parts:
            results["nufft"] = []
            for ndim, n, m in ((2, 256, 1000000), (3, 64, 1000000)):
                for tol in (1e-3, 1e-6):
                    for th in (1, 2):
                        r = kwb(build, "nufft", ndim, n, m, tol, th, nreps, 8)
                        results["nufft"].append(r)
            results["normal"] = [kwb(build, "normal", 2, 256, 200000, th, max(3, nreps), 8)
                                 for th in (1, 2)]
        # Sweep throughput: the same small spec with 1 and 2 local workers, and
        # with 1 and 2 MPI ranks when the MPI variant is built.
        spec = os.path.join(HERE, "sweep-bench.json")
        dry = subprocess.run([kweave, "--version"], capture_output=True) if "sweep" not in parts \
            else subprocess.run([kweave, "sweep", "--spec", spec, "--out", os.path.join(tmp, "dry"),
                              "--dry-run"], capture_output=True, text=True)
        if "sweep" in parts and dry.returncode == 0:
            def sweep_cmd(extra, out):
                return [kweave, "sweep", "--spec", spec, "--out", out, "--quiet", *extra]
            reps = 3 if not args.quick else 1
            runs = iter(range(10**6))
            def timed(cmd_for):
                ts = []
                for _ in range(reps):
                    out = os.path.join(tmp, f"sweep-{next(runs)}")  # a fresh folder: no journal
                    t0 = time.perf_counter()
                    subprocess.run(cmd_for(out), check=True, capture_output=True, env=env1)
                    ts.append((time.perf_counter() - t0) * 1e3)
                return stats(ts)
            j1 = timed(lambda out: sweep_cmd(["--jobs", "1"], out))
            j2 = timed(lambda out: sweep_cmd(["--jobs", "2"], out))
            row("sweep (16 experiments), 2 local workers", j2, "same, 1 worker", j1, ">= 1.7x")
            mpirun = "mpirun"
            if "MPI: built in" in dry.stdout + dry.stderr and any(
                    os.access(os.path.join(d, mpirun), os.X_OK) for d in os.environ.get("PATH", "").split(":")):
                mp = [mpirun, "--oversubscribe", "--allow-run-as-root", "--bind-to", "none", "-np"]
                m1 = timed(lambda out: mp + ["1"] + sweep_cmd([], out))
                m2 = timed(lambda out: mp + ["2"] + sweep_cmd([], out))
                row("sweep (16 experiments), 2 MPI ranks", m2, "same, 1 MPI rank", m1, "measured")
    print(f"\nkweave benchmark on {results['machine']['cpu']} ({results['machine']['cores']} cores)")
    print("median [min-max] over repeated runs; ratio = peer time / kweave time (> 1: kweave faster)\n")
    if ratios:
        print("Interleaved in one process, order rotated; ratio = repetition-by-repetition"
              " kweave / floor (RSS, iterations) or peer / kweave (speed-up over scipy, numpy):"
              " median [min-max]\n")
        w = max(len(r[0]) for r in ratios)
        for name, pn, k, p, st, target in ratios:
            print(f"{name:<{w}}  kweave {rng3(k):<26} {pn:<38} {rng3(p):<26} "
                  f"ratio {st['median']:.3f} [{st['min']:.3f}-{st['max']:.3f}]  {target}")
    if "process" in results:
        p = results["process"]
        print(f"\nwhole process recon .npy -> .npy ({p['label']}): kweave {fmt(p['kweave'])},"
              f" numpy script {fmt(p['numpy_script'])}")
    if rows:
        w = max(len(r[0]) for r in rows)
        print(f"\n{'case':<{w}}  {'kweave':<30} {'peer':<22} {'peer time':<30} {'ratio':>6}  target")
        for name, k, pn, p, ratio, target in rows:
            print(f"{name:<{w}}  {k:<30} {pn:<22} {p:<30} {ratio:6.2f}  {target or ''}")
    if results.get("nufft"):
        print("\nNUFFT, 8 coils through one plan, uniformly random samples (samples/s per direction;"
              " error = relative l2 against the exact NDFT; ratio = speed-up over kweave's exact NDFT)")
        print(f"{'case':<34} {'thr':>3} {'plan':>9} {'forward/s':>10} {'adjoint/s':>10} {'err fwd':>9} {'err adj':>9} {'vs NDFT':>9}")
        for r in results["nufft"]:
            name = f"{r['ndim']}-D {r['n']}^{r['ndim']}, {r['samples']:.0e} samples, tol {r['tolerance']:g}"
            print(f"{name:<34} {r['threads']:>3} {r['plan_ms']:>7.0f}ms {r['forward_samples_per_s']:>10.3g} "
                  f"{r['adjoint_samples_per_s']:>10.3g} {r['forward_error']:>9.2g} {r['adjoint_error']:>9.2g} "
                  f"{r['forward_samples_per_s'] / r['ndft_samples_per_s']:>8.0f}x")
        print("targets: >= 1.5e7 samples/s per direction at 2-D tol 1e-3, one thread; 2 threads >= 1.7x one")
    if results.get("normal"):
        print("\nIteration cost (one E^H W E by Toeplitz embedding, 2-D 256^2, 2e5 samples, 8 coils)"
              " against its floor (2 bare FFTW transforms per coil on the 512^2 grid); target <= 1.5x")
        for r in results["normal"]:
            print(f"  {r['threads']} thread(s): {r['normal_ms']:.2f} ms vs floor {r['fft_floor_ms']:.2f} ms:"
                  f" {r['normal_ms'] / r['fft_floor_ms']:.2f}x")
    if "memory" in results:
        m = results["memory"]
        print(f"\npeak resident memory of `kweave recon` (8 x 128^3): {m['peak_rss_bytes'] / 2**20:.1f} MiB; "
              f"target 2 x (input + output) + 30 MiB = {m['limit_bytes'] / 2**20:.1f} MiB: "
              f"{'within' if m['ok'] else 'ABOVE'}")
    with open(os.path.join(HERE, "results.json"), "w") as f:
        json.dump(results, f, indent=2)
    print(f"\nresults written to {os.path.join(HERE, 'results.json')}")


if __name__ == "__main__":
    main()
