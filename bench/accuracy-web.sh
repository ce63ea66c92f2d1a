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
# REUSE=1 keeps the demo, the mock and the truth run already in DIR (the
# truth run alone takes half an hour) and redoes only the survey runs.
# RECON picks the reconstruction (default transport), MODES the --rsd
# modes (default "none fog full"), RESAMPLES the bootstrap resamples for
# web_agree (default 0).
reuse() { [ "${REUSE:-0}" = 1 ] && [ -e "$1" ]; }
reuse "$dir/demo/run-summary.json" || "$fg" demo -o "$dir/demo" --quiet >/dev/null
reg="$dir/demo/footprint/lanternfish.reg"
# The same mock as the demo's (demoMockArgs in cmd/filigree/demo.go), plus the particles.
mockargs="--zmin 0.01 --zmax 0.15 --grid 256 --box 600 --seed 2026 --bias 1.3 --mag-limit 18.4 --mag-bright 13.5 --nz-cap 0.025"
reuse "$dir/ic.fits" || "$fg" mock --footprint "$reg" $mockargs -o "$dir/mock.fits" --particles "$dir/particles.fits" --ic-cube "$dir/ic.fits" --summary "$dir/mock.json" --quiet
R=$(/usr/bin/python3 -c "import json;print(json.load(open('$dir/demo/run-summary.json'))['smooth_mpch'])")
TH=$(/usr/bin/python3 -c "import json;print(json.load(open('$dir/demo/run-summary.json'))['threshold'])")
echo "R = $R Mpc/h, threshold = $TH"
reuse "$dir/truth-fields.fits" || /usr/bin/time -f "truth run: %e s, %M KB" "$fg" run "$dir/particles.fits" --box 600 --xyz-cols x,y,z --smooth "$R" --threshold "$TH" \
  -o "$dir/particles-web.parquet" --fields "$dir/truth-fields.fits" --quiet
for mode in ${MODES:-none fog full}; do
  /usr/bin/time -f "run --rsd $mode: %e s, %M KB" "$fg" run "$dir/mock.fits" --footprint "$reg" --bias 1.3 --rsd $mode --smooth "$R" --threshold "$TH" \
    --recon "${RECON:-transport}" --recon-resamples "${RESAMPLES:-0}" -o "$dir/web-$mode.fits" --summary "$dir/run-$mode.json" --quiet
done
/usr/bin/python3 - "$dir" "${MODES:-none fog full}" <<'PY'
import sys, json, numpy as np
from astropy.io import fits
from astropy.table import Table
d = sys.argv[1]
obs = np.array(json.load(open(d + "/mock.json"))["observer_mpch"])
truth = fits.open(d + "/truth-fields.fits")
g = truth["DELTA"].header
n, L = g["GRIDN"], g["BOXSIZE"]
h = L / n
ic = fits.open(d + "/ic.fits")["DELTA_LIN"].data.astype(np.float64)
nic = ic.shape[0]
RL = float(json.load(open(d + "/run-none.json")).get("recon", {}).get("smooth_mpch", 4.0))
zref = float(json.load(open(d + "/mock.json"))["reference_redshift"])
def ic_labels(tq):
    # δ_L today × D(zref)/D(0): the growth factor ratio from a flat ΛCDM
    # Heath integral (Ωm = 0.3111) is close enough for labels.
    from scipy.integrate import quad
    om = 0.3111
    E = lambda a: np.sqrt(om / a**3 + 1 - om)
    D = lambda a: E(a) * quad(lambda x: 1 / (x * E(x))**3, 0, a)[0]
    dz = D(1 / (1 + zref)) / D(1.0)
    k = 2 * np.pi * np.fft.fftfreq(nic, d=600 / nic)
    kz = 2 * np.pi * np.fft.rfftfreq(nic, d=600 / nic)
    KX, KY, KZ = np.meshgrid(k, k, kz, indexing="ij")
    k2 = KX**2 + KY**2 + KZ**2
    k2[0, 0, 0] = 1
    dk = np.fft.rfftn(ic * dz) * np.exp(-0.5 * k2 * RL**2) / k2
    dk[0, 0, 0] = 0
    obs_ = obs
    i = np.floor(np.mod(tq + obs_, 600) / (600 / nic)).astype(int) % nic
    comps = {}
    for a, b in [(0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)]:
        K = [KX, KY, KZ]
        comps[(a, b)] = np.fft.irfftn(K[a] * K[b] * dk, s=ic.shape)[i[:, 0], i[:, 1], i[:, 2]]
    T = np.empty((len(tq), 3, 3))
    for (a, b), v in comps.items():
        T[:, a, b] = v
        T[:, b, a] = v
    ev = np.linalg.eigvalsh(T)
    th = float(json.load(open(d + "/run-none.json")).get("recon", {}).get("threshold", 0.2))
    return (ev > th).sum(axis=1)
def sample(name, p):
    a = truth[name].data  # NAXIS3 = x slowest: a[x, y, z]
    i = np.floor(p / h).astype(int) % n
    return a[i[:, 0], i[:, 1], i[:, 2]]
for mode in sys.argv[2].split():
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
    # Reconstruction: Lagrangian positions against the mock's grid points,
    # line-of-sight velocities against the truth, and web_lagr against the
    # web of the initial field (tidal tensor of δ_L, scaled to the reference
    # redshift, smoothed at R_L, at the true Lagrangian position).
    if "lagr_x" in t.colnames:
        lq = np.stack([t["lagr_x"], t["lagr_y"], t["lagr_z"]], axis=1)
        tq = np.stack([t["true_lagr_x"], t["true_lagr_y"], t["true_lagr_z"]], axis=1)
        err = np.sqrt(((lq - tq) ** 2).sum(axis=1))
        ok2 = ok & np.isfinite(err)
        v, tv = np.asarray(t["vpec_los"]), np.asarray(t["true_vpec_los"])
        okv = ok & np.isfinite(v)
        wl = np.asarray(t["web_lagr"]).astype(int)
        lab = ic_labels(tq)
        print(f"   recon: median |q - q_true| = {np.median(err[ok2]):.2f} Mpc/h (grid spacing {600/256:.2f}); "
              f"within one spacing {np.mean(err[ok2] < 600/256):.3f}; r(vpec_los) = {np.corrcoef(v[okv], tv[okv])[0,1]:.3f}; "
              f"web_lagr agreement with the initial field {np.mean((wl == lab)[ok2]):.3f}")
PY
