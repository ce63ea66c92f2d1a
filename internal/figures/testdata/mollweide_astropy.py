#!/usr/bin/python3
"""Reference values of the Mollweide projection for figures' tests.

Made with astropy 5.2.1 (astropy.wcs, which wraps WCSLIB's MOL projection:
Calabretta & Greisen 2002, A&A 395, 1077, the MOL projection; section
number from memory: 6.2.3) and
numpy 1.24.2 (Debian 12 packages python3-astropy and python3-numpy), and
independently with mpmath 1.2.1 (python3-mpmath) at 40 significant digits:
bisection on 2t + sin 2t = pi sin(phi), then Snyder 1987 eqs. 31-1/2.
Near the poles WCSLIB solves for the auxiliary angle only to about 1e-8 deg,
so the tests hold our values to the mpmath columns tightly and to the
astropy columns at WCSLIB's tolerance.
WCSLIB's plane coordinates are in degrees: x = (2*sqrt(2)/pi) * phi * cos(g),
y = sqrt(2) * (180/pi) * sin(g), i.e. 180/pi times the unit-sphere values
that figures.Mollweide returns.

Regenerate with:  /usr/bin/python3 mollweide_astropy.py > mollweide_astropy.csv
"""
import mpmath as mp
import numpy as np
from astropy.wcs import WCS

w = WCS(naxis=2)
w.wcs.ctype = ["RA---MOL", "DEC--MOL"]
w.wcs.crval = [0.0, 0.0]
w.wcs.crpix = [0.0, 0.0]
w.wcs.cdelt = [1.0, 1.0]
w.wcs.set()

rng = np.random.default_rng(20261202)
lon = np.concatenate([[0, 90, 179.5, -179.5, 45, -120, 10, 0, 0], rng.uniform(-179.9, 179.9, 40)])
lat = np.concatenate([[0, 0, 0, 0, 89.99, -89.99, -50, 60, -30], rng.uniform(-89.9, 89.9, 40)])
# RA from 0 to 360 as WCSLIB wants it; native longitude phi is RA - CRVAL1 wrapped.
# With CRPIX = 0, CDELT = 1 and origin 1 the pixel coordinates equal the
# intermediate (projection-plane) coordinates in degrees; "pixcrd" is used
# because astropy 5.2.1 returns the pixel array under "imgcrd" as well.
res = w.wcs.s2p(np.column_stack([np.mod(lon, 360), lat]), 1)
mp.mp.dps = 40


def mollweide_mp(p, t):
    lam, phi = mp.mpf(p) * mp.pi / 180, mp.mpf(t) * mp.pi / 180
    if abs(phi) == mp.pi / 2:
        th = phi
    else:
        # bisection: 2u + sin 2u is increasing on [-pi/2, pi/2]
        lo, hi, target = -mp.pi / 2, mp.pi / 2, mp.pi * mp.sin(phi)
        for _ in range(200):
            mid = (lo + hi) / 2
            if 2 * mid + mp.sin(2 * mid) < target:
                lo = mid
            else:
                hi = mid
        th = (lo + hi) / 2
    k = 180 / mp.pi
    return k * 2 * mp.sqrt(2) / mp.pi * lam * mp.cos(th), k * mp.sqrt(2) * mp.sin(th)


print("# astropy %s WCS RA---MOL: native phi, theta and plane x, y in degrees; mpmath %s: x_mp, y_mp" % (__import__("astropy").__version__, mp.__version__))
print("phi_deg,theta_deg,x_deg,y_deg,x_mp_deg,y_mp_deg")
for p, t, (x, y) in zip(res["phi"], res["theta"], res["pixcrd"]):
    xm, ym = mollweide_mp(float(p), float(t))
    print("%.12f,%.12f,%.12f,%.12f,%s,%s" % (p, t, x, y, mp.nstr(xm, 17), mp.nstr(ym, 17)))
