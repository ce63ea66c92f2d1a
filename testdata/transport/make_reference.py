#!/usr/bin/python3
"""Reference semi-discrete transport costs for reconstruct/transport.

Made with Debian python3-scipy 1.10.1 (scipy.optimize.linear_sum_assignment)
and python3-numpy 1.24.2; run as
    /usr/bin/python3 testdata/transport/make_reference.py > testdata/transport/reference.txt

Problem: N = 125 points drawn uniformly (numpy default_rng(20261202)) in the
unit box [0,1]^3 (clipped, not periodic), equal masses 1/N, and the uniform
density on the box. The semi-discrete optimal cost
    C = sum_i int_{cell_i} |x - y_i|^2 dx
is approximated by an exact assignment: the box is cut into g^3 cubes of side
h = 1/g (g^3 = k N, so every point receives exactly k cubes) and each cube
centre x_s is matched to a copy of a point by
scipy.optimize.linear_sum_assignment with cost |x_s - y_i|^2. Moving a whole
cube of side h to y costs exactly h^3 (|x_s - y|^2 + h^2/4), so
    U(h) = (assignment cost) / g^3 + h^2/4
is the cost of a feasible transport plan, an upper bound on C that
converges to C as h -> 0. Two lattices are given (g = 15, k = 27 and g = 20,
k = 64) so the test can see the discretisation error.
"""
import numpy as np
import scipy
from scipy.optimize import linear_sum_assignment

N = 125
rng = np.random.default_rng(20261202)
y = rng.random((N, 3))


def upper_bound(g):
    h = 1.0 / g
    c = (np.arange(g) + 0.5) * h
    x = np.stack(np.meshgrid(c, c, c, indexing="ij"), -1).reshape(-1, 3)
    k = len(x) // N
    assert k * N == len(x)
    yy = np.repeat(y, k, axis=0)
    cost = ((x[:, None, :] - yy[None, :, :]) ** 2).sum(-1)
    r, col = linear_sum_assignment(cost)
    return cost[r, col].sum() / len(x) + h * h / 4


print("# reference semi-discrete transport cost, unit box [0,1]^3, clipped")
print("# made by make_reference.py with scipy %s, numpy %s" % (scipy.__version__, np.__version__))
print("# U(h) = exact assignment cost of g^3 cube centres to k copies of each point / g^3 + h^2/4")
for g in (15, 20):
    print("upper g=%d k=%d %.10g" % (g, g**3 // N, upper_bound(g)))
print("points %d" % N)
for p in y:
    print("%.17g %.17g %.17g" % tuple(p))
