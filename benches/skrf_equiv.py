#!/usr/bin/env python3
"""The scikit-rf side of the side-by-side comparison (benches/compare.sh).

Does only a part of what `lcgate check` does: read every Touchstone file of a folder,
form Y, and compute single-ended L, Q, SRF and peak Q. Prints the count and seconds.
"""
import pathlib
import sys
import time

import numpy as np
import skrf


def figures(path):
    ntwk = skrf.Network(str(path))
    y = ntwk.y
    w = 2 * np.pi * ntwk.f
    zin = 1.0 / y[:, 0, 0]
    l = zin.imag / w
    q = zin.imag / zin.real
    b = (1.0 / zin).imag
    srf = None
    cross = np.nonzero((b[:-1] < 0) & (b[1:] >= 0))[0]
    if cross.size:
        k = cross[0]
        srf = ntwk.f[k] - b[k] * (ntwk.f[k + 1] - ntwk.f[k]) / (b[k + 1] - b[k])
    below = q if srf is None else q[ntwk.f < srf]
    q_peak = float(below.max()) if below.size else None
    return l[0], q_peak, srf


def main():
    root = pathlib.Path(sys.argv[1])
    files = sorted(p for p in root.rglob("*") if p.suffix.lower() in (".s2p", ".s1p", ".s4p", ".ts"))
    t0 = time.perf_counter()
    for p in files:
        figures(p)
    dt = time.perf_counter() - t0
    print(f"files={len(files)} seconds={dt:.3f}")


if __name__ == "__main__":
    main()
