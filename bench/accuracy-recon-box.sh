#!/usr/bin/env bash
# accuracy-recon-box.sh [DIR] [GRID] [BOX]: how well `filigree run --box`
# recovers the Lagrangian positions of a periodic 2LPT mock (σ8 = 0.8 of the
# Planck 2018 preset, z = 0; all GRID³ particles, default 64³ in a 250 Mpc/h
# box), with the Zel'dovich baseline and with optimal transport. Reports
# for each the fraction of particles whose Lagrangian position lies within
# one grid spacing of the truth, the median error, and the Pearson
# correlation of reconstructed and true displacements (all components).
# Needs /usr/bin/python3 with astropy (Debian python3-astropy).
set -euo pipefail
cd "$(dirname "$0")/.."
dir=${1:-$(mktemp -d)}
n=${2:-64}
L=${3:-250}
mkdir -p "$dir"
go build -o "$dir/filigree" ./cmd/filigree
fg="$dir/filigree"
"$fg" mock --box-only --tracer particles --grid "$n" --box "$L" --seed 11 -o "$dir/particles.fits" --quiet
for m in zeldovich transport; do
  /usr/bin/time -f "$m: %e s, %M KB" "$fg" run "$dir/particles.fits" --box "$L" --xyz-cols x,y,z --recon $m \
    -o "$dir/recon-$m.fits" --summary "$dir/recon-$m.json" --quiet
done
/usr/bin/python3 - "$dir" "$n" "$L" <<'PY'
import sys, warnings, numpy as np
from astropy.table import Table
warnings.simplefilter("ignore")
d, n, L = sys.argv[1], int(sys.argv[2]), float(sys.argv[3])
h = L / n
for m in ["zeldovich", "transport"]:
    t = Table.read(f"{d}/recon-{m}.fits")
    col = lambda a: np.stack([np.asarray(t[a + c], float) for c in "xyz"], 1)
    q, tq = col("lagr_"), col("true_lagr_")
    x = np.stack([np.asarray(t[c], float) for c in "xyz"], 1)
    wrap = lambda v: v - L * np.round(v / L)
    err = np.sqrt((wrap(q - tq) ** 2).sum(1))
    s, ts = wrap(x - q), wrap(x - tq)
    r = np.corrcoef(s.ravel(), ts.ravel())[0, 1]
    print(f"{m}: within one grid spacing ({h:.2f} Mpc/h) {np.mean(err < h):.3f}; median error {np.median(err):.2f} Mpc/h; "
          f"r(displacement) {r:.3f}; rms true displacement {np.sqrt((ts ** 2).sum(1).mean()):.2f} Mpc/h")
PY
