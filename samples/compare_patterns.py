#!/usr/bin/python3
"""Three undersampling patterns at R = 4 under two reconstructions, scored
against the truth, with the kweave Python package (docs/python.md). Writes
the table to stdout and to the CSV file given (default compare_patterns.csv).
Run: make python; PYTHONPATH=python /usr/bin/python3 samples/compare_patterns.py"""
import csv
import sys

import kweave

N, R = 96, 4
scene = dict(phantom="weave", matrix=N, fov="256mm", coils=8, snr=40, seed=1)
methods = {"cg-sense": dict(iterations=30), "cs-wavelet": dict(iterations=60)}
rows = []
for kind in ("uniform", "random", "poisson"):
    pat = kweave.pattern(kind, matrix=f"{N}x{N}", accel=R, acs=16, seed=1)
    psf = kweave.analyse(pat)                             # the pattern's own figures
    acq = kweave.acquire(mask=pat.mask, **scene)          # noisy 8-coil k-space
    for method, opts in methods.items():
        img = kweave.recon(acq.kspace, method=method, sens=acq.maps, **opts).image
        s = kweave.score(acq.truth, img)
        rows.append([kind, f"{psf['acceleration']:.2f}", f"{psf['psf_energy_outside_mainlobe']:.3f}",
                     method, f"{s['nrmse']:.4f}", f"{s['psnr_db']:.2f}", f"{s['ssim']:.4f}"])
head = ["pattern", "effective R", "PSF energy off the main lobe", "method", "NRMSE", "PSNR dB",
        "SSIM"]
width = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(head)]
for r in [head] + rows:
    print("  ".join(v.ljust(w) for v, w in zip(r, width)))
with open(sys.argv[1] if len(sys.argv) > 1 else "compare_patterns.csv", "w", newline="") as f:
    csv.writer(f).writerows([head] + rows)
