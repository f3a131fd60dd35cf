#!/bin/sh
# noncartesian_pictures.sh: the README pictures and scores of issue 7 on the
# demo phantom `weave`: a golden-angle radial and a spiral reconstruction,
# and compressed sensing beside zero-filling on Cartesian variable-density
# undersampling at R = 4.
#
#   sh samples/noncartesian_pictures.sh [OUTDIR]      (default: noncart-out)
#
# 1. Trajectories (kweave pattern): golden angle, ceil(pi/2 N) spokes, readout
#    oversampled 2x (gridding needs it: docs/patterns.md); a spiral from the
#    planner's gradient design (40 mT/m, 150 T/m/s, $INTERLEAVES interleaves);
#    a variable-density random Cartesian mask, R = 4, 12 calibration lines.
# 2. kweave encode: weave, N x N, 240 mm, $COILS coils, SNR $SNR, seed 1,
#    proton density (no sample times: no decay or off-resonance during the
#    readout), with the truth and the coil maps (--sens-out; the sidecar
#    names them, so every reconstruction combines the coils with the known
#    maps and lands in the truth's intensity scale; a root-sum-of-squares
#    image would carry the coil profile and not be comparable).
# 3. kweave recon: grid and cg-sense for the trajectories; fft --combine
#    optimal (zero-filled), cg-sense, cs-wavelet and cs-tv (ten times the
#    default weight, and the default 0.003) for the mask.
# 4. kweave score against the truth (magnitude): NRMSE, PSNR, SSIM; the table
#    goes to stdout and OUTDIR/table.md.
# 5. Pictures: every image as OUTDIR/<name>.png (window 0 .. 1.1 x the
#    truth's maximum, shared by all), and two strips:
#    OUTDIR/noncartesian.png (truth | golden grid | golden cg-sense |
#    spiral grid | spiral cg-sense; labelled tiles, a grey bar) and
#    OUTDIR/cs.png (truth | zero-filled |
#    cg-sense | cs-wavelet | cs-tv lambda 0.03 | cs-tv), each with a row of
#    |image - truth| x 5 below in the same window.
# Environment: KWEAVE (default build/kweave), PY (default /usr/bin/python3),
# N (default 128), COILS (8), SNR (40), INTERLEAVES (8).
set -eu
OUT=${1:-noncart-out}
KWEAVE=${KWEAVE:-build/kweave}
PY=${PY:-/usr/bin/python3}
N=${N:-128}
COILS=${COILS:-8}
SNR=${SNR:-40}
INTERLEAVES=${INTERLEAVES:-8}
mkdir -p "$OUT"
Q=--quiet

# 1. sampling
"$KWEAVE" pattern --kind golden --matrix "$N" --readout-oversampling 2 \
    --out "$OUT/golden.npy" --psf-size 32 >/dev/null
"$KWEAVE" pattern --kind spiral --matrix "$N" --fov 240mm --interleaves "$INTERLEAVES" \
    --out "$OUT/spiral.npy" --psf-size 32 >/dev/null
"$KWEAVE" pattern --kind random --matrix "${N}x$N" --accel 4 --acs 12 --seed 1 \
    --out "$OUT/vd4.npy" >/dev/null

# 2. simulated acquisitions (same phantom, coils, noise level and seed)
enc() { # name, sampling options...
    name=$1; shift
    "$KWEAVE" encode $Q --phantom weave --matrix "$N" --fov 240mm --coils "$COILS" \
        --snr "$SNR" --seed 1 --truth "$OUT/truth.npy" --sens-out "$OUT/sens_$name.npy" \
        --out "$OUT/ks_$name.npy" "$@" >/dev/null
}
enc golden --trajectory "$OUT/golden.npy"
enc spiral --trajectory "$OUT/spiral.npy"
enc vd4 --pattern "$OUT/vd4.npy"
enc full

# 3. reconstructions; 4. scores
: >"$OUT/rows.txt"
rec() { # name, data label, data, method label, recon options...
    name=$1; data=$2; ks=$3; label=$4; shift 4
    if "$KWEAVE" recon $Q --in "$OUT/ks_$ks.npy" --out "$OUT/$name.npy" \
            --json "$OUT/$name.recon.json" "$@" >/dev/null 2>"$OUT/$name.err" &&
       "$KWEAVE" score $Q --ref "$OUT/truth.npy" --test "$OUT/$name.npy" \
            --json "$OUT/$name.score.json" >/dev/null 2>>"$OUT/$name.err"; then
        "$PY" -c "import json,sys; s=json.load(open(sys.argv[1])); print('| %s | %s | %.3f | %.1f | %.3f |' % (sys.argv[2], sys.argv[3], s['nrmse'], s['psnr_db'], s['ssim']))" \
            "$OUT/$name.score.json" "$label" "$data" >>"$OUT/rows.txt"
    else
        echo "| $label | $data | failed: $(head -c 120 "$OUT/$name.err") | | |" >>"$OUT/rows.txt"
    fi
}
SPOKES=$("$PY" -c "import json,sys; print(json.load(open(sys.argv[1]))['spokes'])" "$OUT/golden.json")
G="golden angle, $SPOKES spokes, 2x readout"
S="spiral, $INTERLEAVES interleaves"
R=$("$PY" -c "import json,sys; print('%.2f' % json.load(open(sys.argv[1]))['acceleration'])" "$OUT/vd4.json")
C="Cartesian variable-density random, R = $R (target 4, seed 1)"
# grid is the default method of non-Cartesian data (DCF: radial for spokes,
# Pipe-Menon for the spiral)
rec golden_grid "$G" golden "grid (radial DCF)"
rec golden_cg "$G" golden "cg-sense (30 it.)" --method cg-sense
rec spiral_grid "$S" spiral "grid (Pipe-Menon DCF)"
rec spiral_cg "$S" spiral "cg-sense (30 it.)" --method cg-sense
rec full_fft "Cartesian, fully sampled" full "fft --combine optimal (reference)" --method fft --combine optimal
rec vd4_zf "$C" vd4 "zero-filled (fft --combine optimal)" --method fft --combine optimal
rec vd4_cg "$C" vd4 "cg-sense (30 it.)" --method cg-sense
rec vd4_csw "$C" vd4 "cs-wavelet (db4, lambda 0.003, the default)" --method cs-wavelet
# ten times the default TV weight flattens the finest bars of the resolution
# insert; the default keeps them
rec vd4_cstv "$C" vd4 "cs-tv (lambda 0.03)" --method cs-tv --lambda 0.03
rec vd4_cstv3 "$C" vd4 "cs-tv (lambda 0.003, the default)" --method cs-tv

# 5. pictures: a shared window, strips with error rows
"$PY" - "$OUT" <<'PYEOF'
import sys
import numpy as np
out = sys.argv[1]
t = np.abs(np.load(f"{out}/truth.npy"))
hi = 1.1 * t.max()
def img(name):
    return np.abs(np.load(f"{out}/{name}.npy")) if name != "truth" else t
def strip(names, fname):
    # a stack of tiles: the images, then |image - truth| x 5 below each
    ims = [img(n) for n in names]
    err = [np.abs(i - t) * 5 for i in ims]
    np.save(f"{out}/{fname}.npy", np.stack(ims + err).astype(np.float32))
strip(["truth", "golden_grid", "golden_cg", "spiral_grid", "spiral_cg"], "strip_noncartesian")
strip(["truth", "vd4_zf", "vd4_cg", "vd4_csw", "vd4_cstv", "vd4_cstv3"], "strip_cs")
open(f"{out}/window.txt", "w").write("0:%.6g\n" % hi)
PYEOF
WIN=$(cat "$OUT/window.txt")
for f in truth golden_grid golden_cg spiral_grid spiral_cg vd4_zf vd4_cg vd4_csw vd4_cstv vd4_cstv3; do
    "$KWEAVE" render $Q --in "$OUT/$f.npy" --out "$OUT/$f.png" --window "$WIN"
done
"$KWEAVE" render $Q --in "$OUT/strip_noncartesian.npy" --out "$OUT/noncartesian.png" --window "$WIN" \
    --columns 5 --bar "magnitude" --units "a.u." \
    --title "golden-angle radial and spiral; below: |image - truth| x 5" \
    --tile-labels "truth,radial grid,radial cg-sense,spiral grid,spiral cg-sense,(truth: 0),error x 5,error x 5,error x 5,error x 5"
"$KWEAVE" render $Q --in "$OUT/strip_cs.npy" --out "$OUT/cs.png" --window "$WIN" \
    --columns 6 --bar "magnitude" --units "a.u." \
    --title "Cartesian variable-density R = 4.9; below: |image - truth| x 5" \
    --tile-labels "truth,zero-filled,cg-sense,cs-wavelet,cs-tv 0.03,cs-tv 0.003,(truth: 0),error x 5,error x 5,error x 5,error x 5,error x 5"
"$KWEAVE" render $Q --in "$OUT/vd4.npy" --out "$OUT/vd4_mask.png"

{
    echo "Demo phantom weave, $N x $N, 240 mm, $COILS coils, SNR $SNR (seed 1), proton"
    echo "density; coils combined with the simulator's maps (truth's intensity scale);"
    echo "scores of the magnitude against the simulator's truth (kweave score)."
    echo
    echo "| method | data | NRMSE | PSNR (dB) | SSIM |"
    echo "|---|---|---:|---:|---:|"
    cat "$OUT/rows.txt"
} | tee "$OUT/table.md"
