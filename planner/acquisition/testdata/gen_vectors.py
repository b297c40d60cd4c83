#!/usr/bin/env python3
"""Reference values for erfcx and log expected improvement, from mpmath
(Debian package python3-mpmath), computed with 50 significant digits.

Run from this folder:  python3 gen_vectors.py > vectors.json
The Go tests read vectors.json and need no Python.
"""
import json
import mpmath as mp

mp.mp.dps = 50


def erfcx(x):
    x = mp.mpf(x)
    return mp.exp(x * x) * mp.erfc(x)


def log_h(z):
    # h(z) = phi(z) + z Phi(z), with Phi(z) = erfc(-z/sqrt 2)/2
    z = mp.mpf(z)
    phi = mp.exp(-z * z / 2) / mp.sqrt(2 * mp.pi)
    Phi = mp.erfc(-z / mp.sqrt(2)) / 2
    return mp.log(phi + z * Phi)


def log_Phi(z):
    return mp.log(mp.erfc(-mp.mpf(z) / mp.sqrt(2)) / 2)


xs = [-5, -1, -0.5, 0, 1e-8, 0.1, 0.5, 1, 2, 3.5, 5, 9.99, 10, 10.01, 15, 26, 27, 50, 100, 1e3, 1e5, 1e10]
zs = [5, 2, 1, 0.5, 0, -0.5, -0.999, -1, -1.001, -2, -5, -10, -20, -37, -38, -50, -100, -500, -999, -1000, -1001, -1e4, -1e6]
out = {
    "source": "mpmath %s, 50 digits (gen_vectors.py)" % mp.__version__,
    "erfcx": [[x, float(erfcx(x))] for x in xs],
    "log_h": [[z, float(log_h(z))] for z in zs],
    "log_Phi": [[z, float(log_Phi(z))] for z in zs],
}
print(json.dumps(out, indent=1))
