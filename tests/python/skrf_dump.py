"""Reads Touchstone files with scikit-rf and prints what tests/skrf.rs compares.

Usage: python skrf_dump.py FILE...

Prints one JSON document: {"skrf_version": ..., "files": {FILE: {...}}} where each
file carries the frequencies (Hz), the reference impedances, S and Z at every point
(complex numbers as [re, im], matrices row-major) and, at every sweep point, the
single-ended input impedance figures: Zin = 1/Y11 (Z11 for a 1-port),
l = Im Zin / omega, q = Im Zin / Re Zin. A file scikit-rf cannot read gets
{"error": "..."}; the exit status is 0 either way (the Rust side decides).
"""

import json
import sys
import warnings

import numpy as np
import skrf


def pairs(a):
    return [[float(x.real), float(x.imag)] for x in np.ravel(a)]


def dump(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        net = skrf.Network(path)
    f = net.f
    n = net.nports
    w = 2 * np.pi * f
    if n == 1:
        zin = net.z[:, 0, 0]
    else:
        zin = 1 / net.y[:, 0, 0]
    z0 = np.real(net.z0[0]).tolist()
    return {
        "ports": n,
        "f": f.tolist(),
        "z0": z0,
        "s": [pairs(net.s[k]) for k in range(len(f))],
        "z": [pairs(net.z[k]) for k in range(len(f))],
        "l": (np.imag(zin) / w).tolist(),
        "q": (np.imag(zin) / np.real(zin)).tolist(),
    }


def main(paths):
    out = {"skrf_version": skrf.__version__, "files": {}}
    for p in paths:
        try:
            out["files"][p] = dump(p)
        except Exception as e:  # report, do not stop: the caller names the file
            out["files"][p] = {"error": "%s: %s" % (type(e).__name__, e)}
    json.dump(out, sys.stdout)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main(sys.argv[1:])
