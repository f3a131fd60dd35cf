#!/bin/sh
# simulator_pictures.sh: the pictures of issue 5: each effect of `kweave encode`
# shown in a reconstruction of the demo phantom `weave`, beside the planner's
# (or the sidecar's) prediction of where it appears.
#
#   sh samples/simulator_pictures.sh [OUTDIR]      (default: sim-out)
#
# Strip 1 (contrast.png), 3 T, Cartesian, 8 coils, root-sum-of-squares:
#   proton density | spoiled GRE TR 20 ms 30 deg (T1-weighted) | spin echo
#   TR 4 s TE 100 ms (T2-weighted) | inversion recovery TI = T1(WM) ln 2 (white
#   matter nulled), each in its own window (0 .. its maximum).
# Strip 2 (offres.png), top: the image with the effect; bottom: |image - the
#   same acquisition without it| x 4, in a shared window:
#   fat shift at 100 Hz/pixel (the planner's fat_shift_pixels) |
#   field map (a 150 Hz bump on the grey-matter vial, upper right), Cartesian 100 Hz/pixel
#   (shift along the readout x: 1.5 px at the peak) |
#   the same bump in an EPI protocol (shift along y: 150 Hz x the planner's
#   distortion_pixels_per_hz) | golden-angle radial (blur along the spokes) |
#   spiral (blur around the bump) | correlated noise, SNR 15, rho 0.5
#   (prewhitened optimal combination) - the bottom row shows the noise.
# The numbers go to OUTDIR/predictions.txt.
# Environment: KWEAVE (default build/kweave), PY (default /usr/bin/python3), N (128).
set -eu
OUT=${1:-sim-out}
KWEAVE=${KWEAVE:-build/kweave}
PY=${PY:-/usr/bin/python3}
N=${N:-128}
mkdir -p "$OUT"
Q=--quiet
E="$KWEAVE encode $Q --phantom weave --matrix $N --fov 240mm --coils 8"

# 1. contrast (Cartesian, 250 Hz/pixel)
$E --bandwidth 250Hz/pixel --out "$OUT/pd.npy"
$E --bandwidth 250Hz/pixel --sequence gre --te 4ms --tr 20ms --flip 30 --out "$OUT/gre.npy"
$E --bandwidth 250Hz/pixel --sequence se --te 100ms --tr 4s --out "$OUT/se.npy"
# white matter T1 at 3 T (Stanisz et al. 2005): 1.084 s; null at T1 ln 2
TI=$("$PY" -c "import math; print('%.3fms' % (1084 * math.log(2)))")
$E --bandwidth 250Hz/pixel --sequence ir --te 10ms --tr 10s --ti "$TI" --out "$OUT/ir.npy"
for f in pd gre se ir; do
    "$KWEAVE" recon $Q --in "$OUT/$f.npy" --out "$OUT/${f}_img.npy"
done

# 2. off-resonance and noise
"$PY" - "$OUT" "$N" <<'PYEOF'
import sys
import numpy as np
out, n = sys.argv[1], int(sys.argv[2])
y, x = np.mgrid[0:n, 0:n]
# the grey-matter vial of weave (upper right): centre 0.55 (cos 30 deg,
# sin 30 deg) of the half-FOV (libencode/phantom.c), a bump of sigma n/32
cx = n // 2 + 0.55 * np.cos(np.deg2rad(30)) * n / 2
cy = n // 2 - 0.55 * np.sin(np.deg2rad(30)) * n / 2
s = n / 32
np.save(f"{out}/bump.npy", (150.0 * np.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s * s))).astype(np.float32))
PYEOF
cat >"$OUT/epi.protocol" <<EOF
sequence = epi
b0 = 3T
gmax = 40mT/m
slew = 200T/m/s
fov = 240mm
matrix = $N
bandwidth = 1500Hz/pixel
slice = 3mm
shots = 4
EOF
"$KWEAVE" plan $Q --protocol "$OUT/epi.protocol" --json "$OUT/epi_plan.json" >/dev/null
# the fat vial is water-free fat: compare 100 Hz/pixel with 2000 Hz/pixel
$E --bandwidth 2000Hz/pixel --out "$OUT/fat0.npy"
$E --bandwidth 100Hz/pixel --out "$OUT/fat1.npy"
$E --bandwidth 100Hz/pixel --out "$OUT/fm0.npy"
$E --bandwidth 100Hz/pixel --field-map "$OUT/bump.npy" --out "$OUT/fm1.npy"
$E --protocol "$OUT/epi.protocol" --sequence pd --out "$OUT/epi0.npy"
$E --protocol "$OUT/epi.protocol" --sequence pd --field-map "$OUT/bump.npy" --out "$OUT/epi1.npy"
"$KWEAVE" pattern $Q --kind golden --matrix "$N" --readout-oversampling 2 --out "$OUT/golden.npy" >/dev/null
"$KWEAVE" pattern $Q --kind spiral --matrix "$N" --fov 240mm --interleaves 16 --te 2ms \
    --out "$OUT/spiral.npy" >/dev/null
$E --trajectory "$OUT/golden.npy" --times "$OUT/golden_times.npy" --out "$OUT/rad0.npy"
$E --trajectory "$OUT/golden.npy" --times "$OUT/golden_times.npy" --field-map "$OUT/bump.npy" \
    --out "$OUT/rad1.npy"
$E --trajectory "$OUT/spiral.npy" --times "$OUT/spiral_times.npy" --te 2ms --out "$OUT/sp0.npy"
$E --trajectory "$OUT/spiral.npy" --times "$OUT/spiral_times.npy" --te 2ms \
    --field-map "$OUT/bump.npy" --out "$OUT/sp1.npy"
$E --bandwidth 250Hz/pixel --sens-out "$OUT/noise_sens.npy" --out "$OUT/nz0.npy"
$E --bandwidth 250Hz/pixel --snr 15 --noise-corr 0.5 --seed 3 --sens-out "$OUT/noise_sens.npy" \
    --out "$OUT/nz1.npy"
for f in fat0 fat1 fm0 fm1 epi0 epi1 rad0 rad1 sp0 sp1; do
    "$KWEAVE" recon $Q --in "$OUT/$f.npy" --out "$OUT/${f}_img.npy"
done
for f in nz0 nz1; do  # the sidecar's maps and noise covariance: prewhitened optimal combination
    "$KWEAVE" recon $Q --in "$OUT/$f.npy" --method fft --combine optimal --out "$OUT/${f}_img.npy"
done

# 3. strips and the predictions
"$PY" - "$OUT" "$N" <<'PYEOF'
import json
import sys
import numpy as np
out, n = sys.argv[1], int(sys.argv[2])
ld = lambda f: np.abs(np.load(f"{out}/{f}_img.npy"))
c = [ld(f) for f in ("pd", "gre", "se", "ir")]
np.save(f"{out}/strip_contrast.npy", np.stack([i / i.max() for i in c]).astype(np.float32))
pairs = [("fat0", "fat1"), ("fm0", "fm1"), ("epi0", "epi1"), ("rad0", "rad1"), ("sp0", "sp1"),
         ("nz0", "nz1")]
top, bot = [], []
for a, b in pairs:
    ia, ib = ld(a), ld(b)
    m = ia.max()
    top.append(ib / m)
    bot.append(np.abs(ib - ia) / m * 4)
np.save(f"{out}/strip_offres.npy", np.stack(top + bot).astype(np.float32))
side = lambda f: json.load(open(f"{out}/{f}.json"))
plan = json.load(open(f"{out}/epi_plan.json"))
with open(f"{out}/predictions.txt", "w") as o:
    o.write("fat shift at 100 Hz/pixel (sidecar fat_shift_pixels, = kweave plan's): %.2f px along x\n"
            % side("fat1")["protocol"]["fat_shift_pixels"])
    o.write("field-map bump peak 150 Hz at 100 Hz/pixel: %.2f px along x at the peak\n" % (150 / 100))
    o.write("EPI (%s shots, %.0f Hz/pixel): %.4f px per Hz (kweave plan) -> %.2f px along y at the peak\n"
            % (plan["shots"] if "shots" in plan else 4, plan["bandwidth_per_pixel_hz"],
               plan["distortion_pixels_per_hz"], 150 * plan["distortion_pixels_per_hz"]))
    r = side("rad1")["protocol"]
    o.write("golden-angle radial: readout %.2f ms; 150 Hz -> %.2f cycles end to end: a blur along the spokes\n"
            % (np.ptp(np.load(f"{out}/golden_times.npy")) * 1e3,
               150 * np.ptp(np.load(f"{out}/golden_times.npy"))))
    o.write("spiral: readout %.2f ms per interleaf; 150 Hz -> %.2f cycles by the end: a blur\n"
            % (np.ptp(np.load(f"{out}/spiral_times.npy")) * 1e3,
               150 * np.ptp(np.load(f"{out}/spiral_times.npy"))))
PYEOF
"$KWEAVE" render $Q --in "$OUT/strip_contrast.npy" --out "$OUT/contrast.png" --window 0:1 \
    --columns 4 --bar "signal / image maximum" --title "contrast at 3 T (each image to its own maximum)" \
    --tile-labels "proton density,GRE (T1-weighted),SE (T2-weighted),IR (WM nulled)"
"$KWEAVE" render $Q --in "$OUT/strip_offres.npy" --out "$OUT/offres.png" --window 0:1.1 \
    --columns 6 --bar "signal / maximum without the effect" \
    --title "each effect; below: |with - without| x 4" \
    --tile-labels "fat 100 Hz/px,150 Hz bump,bump in EPI,bump radial,bump spiral,noise rho 0.5,x 4,x 4,x 4,x 4,x 4,x 4"
cat "$OUT/predictions.txt"
