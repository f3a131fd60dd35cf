#!/usr/bin/python3
"""kweave benchmarks, side by side with their peers on the same input.

Run by `make bench` (under /usr/bin/python3 for numpy and scipy). Every figure
is a median over repeated runs with its min and max; each kweave figure is
printed with its ratio against the peer measured in the same run. Results
also go to bench/results.json with the machine's description. Timings are
benchmarks, never tests: the machine is shared and noisy.
"""
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


def time_py(fn, reps):
    fn()  # warm-up (plans, caches)
    ts = []
    for _ in range(reps):
        t0 = time.perf_counter()
        fn()
        ts.append((time.perf_counter() - t0) * 1e3)
    return stats(ts)


def c_bench(build, mode, path, threads, reps):
    out = subprocess.run([os.path.join(build, "kw_bench"), mode, path, str(threads), str(reps)],
                         capture_output=True, text=True, check=True).stdout
    r = json.loads(out.strip().splitlines()[-1])
    return {k: r[k] for k in ("median_ms", "min_ms", "max_ms", "reps")}


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


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--build", default=os.path.join(ROOT, "build"))
    ap.add_argument("--quick", action="store_true", help="fewer repetitions")
    args = ap.parse_args()
    build = os.path.abspath(args.build)
    kweave = os.path.join(build, "kweave")
    q = 3 if args.quick else 1
    rows, results = [], {"machine": machine(), "cases": []}

    def row(name, kw, peer_name, peer, target=None):
        ratio = peer["median_ms"] / kw["median_ms"]
        rows.append((name, fmt(kw), peer_name, fmt(peer), ratio, target))
        results["cases"].append({"case": name, "kweave": kw, "peer": peer_name,
                                 "peer_result": peer, "speedup_vs_peer": ratio, "target": target})

    with tempfile.TemporaryDirectory(prefix="kweave-bench-") as tmp:
        rng = np.random.default_rng(2026)
        cases = [("32 coils 256x256", (32, 256, 256), 30 // q),
                 ("8 coils 512x512", (8, 512, 512), 30 // q),
                 ("8 coils 128^3", (8, 128, 128, 128), 7 if not args.quick else 3)]
        env1 = dict(os.environ, OMP_NUM_THREADS="1", KWEAVE_WISDOM=os.path.join(tmp, "wisdom"))
        for label, shape, reps in cases:
            x = (rng.standard_normal(shape, dtype=np.float32)
                 + 1j * rng.standard_normal(shape, dtype=np.float32)).astype(np.complex64)
            path = os.path.join(tmp, "ks.npy")
            np.save(path, x)
            floor = c_bench(build, "floor", path, 1, reps)
            fused = c_bench(build, "rss", path, 1, reps)
            sp = time_py(lambda: rss_scipy(x, 1), max(3, reps // 3))
            npy = time_py(lambda: rss_numpy(x), max(3, reps // 3))
            row(f"recon RSS {label}, 1 thread", fused, "bare FFTW (floor)", floor,
                "kweave <= 1.25x floor" if shape == (32, 256, 256) else None)
            row(f"recon RSS {label}, 1 thread", fused, "scipy.fft complex64", sp,
                ">= 2.5x" if shape == (32, 256, 256) else None)
            row(f"recon RSS {label}, 1 thread", fused, "numpy.fft", npy,
                ">= 4x" if shape == (32, 256, 256) else None)
            two = c_bench(build, "rss", path, 2, reps)
            row(f"recon RSS {label}, threads", two, "same, 1 thread", fused, ">= 1.7x")
            if len(shape) == 3:  # the whole process, file to file (2-D cases)
                out = os.path.join(tmp, "img.npy")
                kw = process_runs(build, [kweave, "recon", "--in", path, "--out", out, "--quiet"],
                                  max(3, 10 // q), env=env1)
                py = process_runs(build, [sys.executable, "-c", PY_PROCESS, path, out], max(3, 10 // q))
                row(f"whole process recon .npy -> .npy ({label})", kw, "numpy script process", py,
                    "faster than numpy")
            if shape == (32, 256, 256):
                inout = x.nbytes + x[0].real.nbytes
                limit = 2.5 * inout + 30 * 2**20
                results["memory"] = {"peak_rss_bytes": kw["peak_rss_bytes"], "input_plus_output_bytes": inout,
                                     "limit_bytes": limit, "ok": kw["peak_rss_bytes"] <= limit}
        # NUFFT: 8 coils through one plan, uniformly random samples; the peer
        # is kweave's exact NDFT (double) on the same samples.
        def kwb(*a):
            out = subprocess.run([os.path.join(build, "kw_bench"), *map(str, a)],
                                 capture_output=True, text=True, check=True).stdout
            return json.loads(out.strip().splitlines()[-1])
        nreps = 5 if not args.quick else 2
        results["nufft"] = []
        for ndim, n, m in ((2, 256, 1000000), (3, 64, 1000000)):
            for tol in (1e-3, 1e-6):
                for th in (1, 2):
                    r = kwb("nufft", ndim, n, m, tol, th, nreps, 8)
                    results["nufft"].append(r)
        results["normal"] = [kwb("normal", 2, 256, 200000, th, max(3, nreps), 8) for th in (1, 2)]
        # Sweep throughput: the same small spec with 1 and 2 local workers, and
        # with 1 and 2 MPI ranks when the MPI variant is built.
        spec = os.path.join(HERE, "sweep-bench.json")
        dry = subprocess.run([kweave, "sweep", "--spec", spec, "--out", os.path.join(tmp, "dry"),
                              "--dry-run"], capture_output=True, text=True)
        if dry.returncode == 0:
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
    w = max(len(r[0]) for r in rows)
    print(f"{'case':<{w}}  {'kweave':<30} {'peer':<22} {'peer time':<30} {'ratio':>6}  target")
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
        print(f"\npeak resident memory of `kweave recon` (32x256x256): {m['peak_rss_bytes'] / 2**20:.1f} MiB; "
              f"limit 2.5 x (input + output) + 30 MiB = {m['limit_bytes'] / 2**20:.1f} MiB: "
              f"{'within' if m['ok'] else 'ABOVE'}")
    with open(os.path.join(HERE, "results.json"), "w") as f:
        json.dump(results, f, indent=2)
    print(f"\nresults written to {os.path.join(HERE, 'results.json')}")


if __name__ == "__main__":
    main()
