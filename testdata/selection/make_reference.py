#!/usr/bin/python3
"""Reference values for mask/selection's Kolmogorov-Smirnov helpers.

Generated with Debian python3-scipy 1.10.1 (scipy.stats) and numpy:
    /usr/bin/python3 testdata/selection/make_reference.py > testdata/selection/ks_reference.csv

Rows (kind, n, m, x, value):
  kolmogorov  -  -  x  scipy.stats.kstwobign.sf(x)   (limit distribution of sqrt(n) D_n)
  kstwo       n  -  d  scipy.stats.kstwo.sf(d, n)    (exact P(D_n >= d), one sample)
  one_d/one_p n  -  a  scipy.stats.kstest(x, 'uniform', method='exact') statistic / p-value
                       for the sample x_i = frac(i*phi)**a, i = 1..n, phi = (sqrt(5)-1)/2
  two_d/two_p n  m  a  scipy.stats.ks_2samp(x, y, method='asymp') statistic / p-value
                       with x_i = frac(i*phi)**a (i = 1..n), y_j = frac(j*sqrt(2)) (j = 1..m)
"""
import math
import sys

import scipy
from scipy import stats

PHI = (math.sqrt(5) - 1) / 2


def golden(n, a):
    return [math.fmod(i * PHI, 1.0) ** a for i in range(1, n + 1)]


def root2(m):
    return [math.fmod(j * math.sqrt(2), 1.0) for j in range(1, m + 1)]


out = sys.stdout
out.write("# scipy %s; made by make_reference.py\n" % scipy.__version__)
out.write("kind,n,m,x,value\n")
for x in [0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2, 1.3, 1.36, 1.5, 1.63, 1.8, 2.0, 2.5, 3.0, 3.5]:
    out.write("kolmogorov,0,0,%r,%r\n" % (x, float(stats.kstwobign.sf(x))))
for n in [1, 2, 3, 5, 10, 20, 50, 100, 140, 141, 500, 1000, 2000, 10000, 100000]:
    for t in [0.3, 0.5, 0.7, 0.9, 1.0, 1.2, 1.36, 1.6, 2.0, 2.5]:
        d = t / math.sqrt(n)
        if d >= 1:
            continue
        out.write("kstwo,%d,0,%r,%r\n" % (n, d, float(stats.kstwo.sf(d, n))))
for n, a in [(20, 1.0), (20, 1.5), (20, 3.0), (200, 1.1), (200, 1.3), (1000, 1.05), (1000, 1.15), (5000, 1.02), (5000, 1.06)]:
    r = stats.kstest(golden(n, a), "uniform", method="exact")
    out.write("one_d,%d,0,%r,%r\n" % (n, a, float(r.statistic)))
    out.write("one_p,%d,0,%r,%r\n" % (n, a, float(r.pvalue)))
for n, m, a in [(150, 230, 1.0), (150, 230, 1.2), (1000, 700, 1.05), (1000, 700, 1.2), (40, 60, 1.5)]:
    r = stats.ks_2samp(golden(n, a), root2(m), method="asymp")
    out.write("two_d,%d,%d,%r,%r\n" % (n, m, a, float(r.statistic)))
    out.write("two_p,%d,%d,%r,%r\n" % (n, m, a, float(r.pvalue)))
