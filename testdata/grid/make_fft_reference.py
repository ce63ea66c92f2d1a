#!/usr/bin/python3
"""Reference 3D real FFTs for the tests of reconstruct/grid.

Made with numpy 1.24.2 (numpy.fft.rfftn / numpy.fft.irfftn, pocketfft) on
/usr/bin/python3. Writes fft_reference.json with, for N = 8 and N = 16:
  x        a seeded random real field of small integers (exact in binary),
           C order (x slowest), length N^3;
  rfftn    numpy.fft.rfftn(x), C order with last axis N/2+1, as [re, im] lists;
and for N = 8 only (to keep the file small):
  s        a seeded random half spectrum of small integers, [re, im];
  irfftn   numpy.fft.irfftn(s, s=(N, N, N)), C order.
Floats are written with Python's shortest round-trip repr, so they parse
back to the same doubles.

Run: /usr/bin/python3 testdata/grid/make_fft_reference.py
"""
import json
import os

import numpy as np

assert np.__version__ == "1.24.2", np.__version__

rng = np.random.default_rng(20261202)
cases = []
for n in (8, 16):
    x = rng.integers(-99, 100, size=(n, n, n)).astype(np.float64)
    fx = np.fft.rfftn(x)
    case = {
        "n": n,
        "x": [int(v) for v in x.ravel()],
        "rfftn_re": [float(v) for v in fx.real.ravel()],
        "rfftn_im": [float(v) for v in fx.imag.ravel()],
    }
    if n == 8:
        h = n // 2 + 1
        sre = rng.integers(-99, 100, size=(n, n, h)).astype(np.float64)
        sim = rng.integers(-99, 100, size=(n, n, h)).astype(np.float64)
        inv = np.fft.irfftn(sre + 1j * sim, s=(n, n, n))
        case["s_re"] = [int(v) for v in sre.ravel()]
        case["s_im"] = [int(v) for v in sim.ravel()]
        case["irfftn"] = [float(v) for v in inv.ravel()]
    cases.append(case)

out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "fft_reference.json")
with open(out, "w") as f:
    json.dump({"generator": "numpy %s numpy.fft.rfftn/irfftn" % np.__version__,
               "cases": cases}, f, separators=(",", ":"))
