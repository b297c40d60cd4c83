#!/usr/bin/env python3
"""Reference values for erfcx, log expected improvement and the terms of
max-value entropy search, from mpmath
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


def log_mes(g):
    # h(g) = g phi(g) / (2 Phi(g)) - ln Phi(g): max-value entropy search's
    # term (Wang and Jegelka 2017, eq. 6), here at gamma = (mean - y*)/sd.
    # ln Phi as log1p of the upper tail: at 50 digits Phi itself rounds to
    # 1 beyond g of about 15.
    g = mp.mpf(g)
    phi = mp.exp(-g * g / 2) / mp.sqrt(2 * mp.pi)
    Phi = mp.erfc(-g / mp.sqrt(2)) / 2
    log_Phi = mp.log1p(-mp.erfc(g / mp.sqrt(2)) / 2) if g > 0 else mp.log(Phi)
    return mp.log(g * phi / (2 * Phi) - log_Phi)


xs = [-5, -1, -0.5, 0, 1e-8, 0.1, 0.5, 1, 2, 3.5, 5, 9.99, 10, 10.01, 15, 26, 27, 50, 100, 1e3, 1e5, 1e10]
zs = [5, 2, 1, 0.5, 0, -0.5, -0.999, -1, -1.001, -2, -5, -10, -20, -37, -38, -50, -100, -500, -999, -1000, -1001, -1e4, -1e6]
gs = [-1e3, -30, -8, -5.01, -5, -1, -0.1, 0, 1e-6, 0.5, 2, 4.99, 5, 5.01, 8, 20, 37, 40, 100, 1e3]
out = {
    "source": "mpmath %s, 50 digits (gen_vectors.py)" % mp.__version__,
    "erfcx": [[x, float(erfcx(x))] for x in xs],
    "log_h": [[z, float(log_h(z))] for z in zs],
    "log_Phi": [[z, float(log_Phi(z))] for z in zs],
    "log_mes": [[g, float(log_mes(g))] for g in gs],
}
print(json.dumps(out, indent=1))
