#!/bin/sh
# compare_cartesian.sh: the README table "method x acceleration x NRMSE/SSIM"
# for the Cartesian reconstructions of `kweave recon`, on the demo phantom.
#
#   sh samples/compare_cartesian.sh [OUTDIR]      (default: compare-out)
#
# 1. `kweave encode` simulates fully sampled 8-coil k-space of the demo
#    phantom `weave` (192 x 192, 240 mm, SNR $SNR, default 100, seed 1) with its truth and
#    coil maps. If this kweave has no `encode` yet, the script says so and
#    falls back on a numpy stand-in (ellipses, Gaussian loop coils) so that
#    the rest of the chain can still be exercised.
# 2. Undersampling is applied by zeroing k-space lines (docs/api.md: unsampled
#    points are zeros): uniform R = 2, 3, 4 along ky with 24 calibration
#    lines, and 5/8 partial Fourier along ky.
# 3. Every method reconstructs every case with the simulator's maps and
#    noise covariance (named in the sidecars) and the optimal combination, so
#    that images are in the truth's intensity scale; `--ref` scores them.
#    (Maps estimated from the calibration block are relative, sum |s|^2 = 1,
#    and give images in the root-sum-of-squares scale instead.) The table goes to stdout and OUTDIR/table.md; the reports to
#    OUTDIR/*.json, the pictures to OUTDIR/*.png.
# Environment: KWEAVE (default build/kweave), ENCODER (the kweave that
# simulates; default $KWEAVE), PY (default /usr/bin/python3),
# ENCODE_ARGS (extra options for kweave encode).
set -eu
OUT=${1:-compare-out}
KWEAVE=${KWEAVE:-build/kweave}
ENCODER=${ENCODER:-$KWEAVE}
PY=${PY:-/usr/bin/python3}
N=192
COILS=8
mkdir -p "$OUT"

source_note="demo phantom weave, kweave encode"
if "$ENCODER" encode --help >/dev/null 2>&1 &&
   "$ENCODER" encode --phantom weave --matrix $N --fov 240mm --coils $COILS \
        --snr ${SNR:-100} --seed 1 --out "$OUT/full.npy" --truth "$OUT/truth.npy" \
        --sens-out "$OUT/sens.npy" ${ENCODE_ARGS:-} >/dev/null; then
    :
else
    echo "compare_cartesian.sh: 'kweave encode --coils' is not available;" \
         "using a numpy stand-in phantom (NOT the demo phantom)" >&2
    source_note="numpy stand-in phantom (kweave encode not available)"
    rm -f "$OUT/full.json"
    "$PY" - "$OUT" $N $COILS "${SNR:-100}" <<'PYEOF'
import sys
import numpy as np
out, n, nc = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
y, x = np.mgrid[:n, :n]
x = (x - n / 2) / (n / 2); y = (n / 2 - y) / (n / 2)
def ell(cx, cy, a, b):
    return ((x - cx) / a) ** 2 + ((y - cy) / b) ** 2 < 1
o = 0.8 * ell(0, 0, 0.72, 0.88)
for cx, cy, v in ((-0.35, 0.35, 0.5), (0.35, 0.35, -0.3), (-0.35, -0.35, 0.3), (0.35, -0.35, 0.7)):
    o = o + v * ell(cx, cy, 0.16, 0.16)
for i in range(6):  # resolution bars
    o = o + 0.4 * ((abs(x - (-0.15 + 0.06 * i)) < 0.015) & (abs(y) < 0.12))
S = []
for c in range(nc):
    a = 2 * np.pi * c / nc
    r2 = (x - 1.3 * np.cos(a)) ** 2 + (y - 1.3 * np.sin(a)) ** 2
    S.append(np.exp(-r2 / (2 * 0.9 ** 2)) * np.exp(1j * (0.5 * x * np.cos(a) + 0.5 * y * np.sin(a) + a)))
S = np.array(S); S /= np.sqrt((abs(S) ** 2).sum(0))
ax = (-2, -1)
k = np.fft.fftshift(np.fft.fftn(np.fft.ifftshift(S * o, axes=ax), axes=ax, norm="ortho"), axes=ax)
rng = np.random.default_rng(1)
snr = float(sys.argv[4])
sigma = o[o > 0].mean() / snr / np.sqrt(2)  # mean over the object / noise sd of one coil image
k = k + sigma * (rng.standard_normal(k.shape) + 1j * rng.standard_normal(k.shape))
np.save(f"{out}/full.npy", k.astype(np.complex64))
np.save(f"{out}/truth.npy", o.astype(np.float32))
np.save(f"{out}/sens.npy", S.astype(np.complex64))
PYEOF
fi

# Undersampled copies: zeros where not acquired, each with a sidecar that
# names the simulator's maps and noise covariance (so every method works in
# the truth's intensity scale) and states the acceleration.
"$PY" - "$OUT" <<'PYEOF'
import json, os, sys
import numpy as np
out = sys.argv[1]
k = np.load(f"{out}/full.npy")
n = k.shape[-2]
side = {"kind": "kspace", "layout": "cartesian", "sens": "sens.npy"}
if os.path.exists(f"{out}/full.json"):
    side = json.load(open(f"{out}/full.json"))
else:
    json.dump(side, open(f"{out}/full.json", "w"), indent=1)
def write(name, a, **keys):
    np.save(f"{out}/{name}.npy", np.ascontiguousarray(a, dtype=np.complex64))
    json.dump(dict(side, **keys), open(f"{out}/{name}.json", "w"), indent=1)
for R in (2, 3, 4):
    m = np.zeros(n, bool)
    m[::R] = True
    m[n // 2 - 12:n // 2 + 12] = True
    write(f"r{R}", k * m[None, :, None], acceleration=R, acs_lines=24)
pf = k.copy()
pf[..., :n * 3 // 8, :] = 0
write("pf", pf, partial_fourier=0.625)
PYEOF

row() { # label input method [options...]
    label=$1; in=$2; method=$3; shift 3
    tag=$(echo "$label-$method-$*" | tr -c 'A-Za-z0-9\n' '_')
    if "$KWEAVE" recon --quiet --in "$OUT/$in" --method "$method" --ref "$OUT/truth.npy" \
            --out "$OUT/$tag.png" --json "$OUT/$tag.json" "$@" >/dev/null 2>"$OUT/$tag.err"; then
        "$PY" -c "import json,sys; s=json.load(open(sys.argv[1]))['scores']; print('| %s | %s | %.4f | %.4f |' % (sys.argv[2], sys.argv[3], s['nrmse'], s['ssim']))" \
            "$OUT/$tag.json" "$label" "$method $*"
    else
        echo "| $label | $method $* | failed: $(head -c 120 "$OUT/$tag.err") | |"
    fi
}

{
    echo "Cartesian reconstructions of the $source_note, $N x $N, $COILS coils, SNR ${SNR:-100};"
    echo "uniform undersampling along ky with 24 calibration lines; the simulator's"
    echo "coil maps and noise covariance from the sidecar (prewhitening; coils"
    echo "combined by Roemer's optimal combination, so every image is in the truth's"
    echo "intensity scale); NRMSE and SSIM of the magnitude against the truth."
    echo
    echo "| sampling | method | NRMSE | SSIM |"
    echo "|---|---|---|---|"
    row "R = 1" full.npy fft --combine optimal
    row "R = 1" full.npy sense
    for R in 2 3 4; do
        row "R = $R" r$R.npy fft --combine optimal
        row "R = $R" r$R.npy sense
        row "R = $R" r$R.npy sense --lambda 0.01
        row "R = $R" r$R.npy grappa --combine optimal
    done
    row "5/8 partial Fourier" pf.npy fft --combine optimal
    row "5/8 partial Fourier" pf.npy homodyne --combine optimal
    row "5/8 partial Fourier" pf.npy pocs --combine optimal
} | tee "$OUT/table.md"
