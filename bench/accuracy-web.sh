#!/usr/bin/env bash
# accuracy-web.sh [DIR]: how well `filigree run` recovers the tidal web of
# the demo survey, measured against the truth of its own mock.
#
# Truth: `filigree run --box` on the mock's full real-space particle set
# (written with `mock --particles`, at the survey's reference redshift), at
# the same smoothing R and threshold as the survey run, probed at each
# galaxy's true position in the box. Reported for galaxies with edge_dist >
# 2R: the fraction whose web_tidal equals the truth (overall and per class)
# and the Pearson correlation of delta with the truth, for each --rsd mode.
# Needs /usr/bin/python3 with astropy (Debian python3-astropy). Heavy: the
# particle run tessellates 256³ points (several minutes, ~6 GB).
set -euo pipefail
cd "$(dirname "$0")/.."
dir=${1:-$(mktemp -d)}
mkdir -p "$dir"
go build -o "$dir/filigree" ./cmd/filigree
fg="$dir/filigree"
"$fg" demo -o "$dir/demo" --quiet >/dev/null
reg="$dir/demo/footprint/lanternfish.reg"
# The same mock as the demo's (demoMockArgs in cmd/filigree/demo.go), plus the particles.
mockargs="--zmin 0.01 --zmax 0.15 --grid 256 --box 600 --seed 2026 --bias 1.3 --mag-limit 18.4 --mag-bright 13.5 --nz-cap 0.025"
"$fg" mock --footprint "$reg" $mockargs -o "$dir/mock.fits" --particles "$dir/particles.fits" --summary "$dir/mock.json" --quiet
R=$(/usr/bin/python3 -c "import json;print(json.load(open('$dir/demo/run-summary.json'))['smooth_mpch'])")
TH=$(/usr/bin/python3 -c "import json;print(json.load(open('$dir/demo/run-summary.json'))['threshold'])")
echo "R = $R Mpc/h, threshold = $TH"
/usr/bin/time -f "truth run: %e s, %M KB" "$fg" run "$dir/particles.fits" --box 600 --xyz-cols x,y,z --smooth "$R" --threshold "$TH" \
  -o "$dir/particles-web.parquet" --fields "$dir/truth-fields.fits" --quiet
for mode in none fog full; do
  "$fg" run "$dir/mock.fits" --footprint "$reg" --bias 1.3 --rsd $mode --smooth "$R" --threshold "$TH" -o "$dir/web-$mode.fits" --quiet
done
/usr/bin/python3 - "$dir" <<'PY'
import sys, json, numpy as np
from astropy.io import fits
from astropy.table import Table
d = sys.argv[1]
obs = np.array(json.load(open(d + "/mock.json"))["observer_mpch"])
truth = fits.open(d + "/truth-fields.fits")
g = truth["DELTA"].header
n, L = g["GRIDN"], g["BOXSIZE"]
h = L / n
def sample(name, p):
    a = truth[name].data  # NAXIS3 = x slowest: a[x, y, z]
    i = np.floor(p / h).astype(int) % n
    return a[i[:, 0], i[:, 1], i[:, 2]]
for mode in ["none", "fog", "full"]:
    t = Table.read(d + f"/web-{mode}.fits")
    R = float(g["SMOOTH"])
    ok = (~t["web_tidal"].mask if hasattr(t["web_tidal"], "mask") else np.ones(len(t), bool)) & (np.asarray(t["edge_dist"]) > 2 * R)
    p = np.stack([t["true_x"], t["true_y"], t["true_z"]], axis=1) + obs
    p = np.mod(p, L)
    tw = sample("WEB_TIDAL", p).astype(int)
    td = sample("DELTA", p)
    w = np.asarray(t["web_tidal"]).astype(int)
    agree = (w == tw)[ok].mean()
    per = {c: float((w[ok & (tw == c)] == c).mean()) if (ok & (tw == c)).any() else float("nan") for c in range(4)}
    r = np.corrcoef(np.asarray(t["delta"])[ok], td[ok])[0, 1]
    print(f"--rsd {mode}: {ok.sum()} galaxies with edge_dist > 2R; agreement {agree:.3f}; per true class (void, sheet, filament, knot) "
          + ", ".join(f"{per[c]:.3f}" for c in range(4)) + f"; Pearson r(delta) = {r:.3f}")
PY
