#!/usr/bin/env python3
"""Write seed inputs for the fuzz targets from the repository's own test data.

    python3 fuzz/make_seeds.py            # from the repository root

- corpus/figures_of_network: Touchstone parts of tests/data and sample-library
  (S, RI, version 1) in the target's binary layout (see its module doc), thinned
  to at most 64 points, plus a few variants of one coil that switch on each flag
  (declared kind, Y and Z matrices, frequency modes, flat curves, references).
- corpus/load_rules: every rules and sidecar file of tests/data and rules/, plus
  a few bare expressions.

Plain Python, no packages. Seeds are written under content-hash
names, like libFuzzer's, so re-running adds nothing twice.
"""

import hashlib
import pathlib
import struct

ROOT = pathlib.Path(__file__).resolve().parent.parent
CORPUS = ROOT / "fuzz" / "corpus"
UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}

PARTS = [
    "tests/data/inspect/pi_coil.s2p",
    "tests/data/lib-small/coils/L1p0n.s2p",
    "tests/data/lib-small/coils/L1p0n_lossy.s2p",
    "tests/data/lib-small/coils/L1p0n_short.s2p",
    "tests/data/lib-small/coils/L2p0n_ref.s2p",
    "tests/data/lib-small/caps/C0p5p.s1p",
    "tests/data/lib-small/tanks/tank.s1p",
    "tests/data/lib-small/xfmr/T1n2n.s4p",
    "sample-library/mmwave/inductors/L50p_w6_n1.s2p",
    "sample-library/mmwave/inductors/L300p_w4_n2.s2p",
    "sample-library/rf/diff/Ld2p0n_w10_n2_lna.s2p",
    "sample-library/rf/centre_tap/Lct4p8n_w8_n3_pgs.s3p",
    "sample-library/caps/mom/C500f_mom_f28.s2p",
    "sample-library/xfmr/mmw/X1to1_60g_stacked_k70.s4p",
]


def solve(a, b):
    """A⁻¹·B for small complex matrices (lists of rows), Gauss-Jordan with pivoting."""
    n = len(a)
    m = [list(a[i]) + list(b[i]) for i in range(n)]
    for c in range(n):
        p = max(range(c, n), key=lambda r: abs(m[r][c]))
        m[c], m[p] = m[p], m[c]
        piv = m[c][c]
        m[c] = [v / piv for v in m[c]]
        for r in range(n):
            if r != c:
                k = m[r][c]
                m[r] = [v - k * w for v, w in zip(m[r], m[c])]
    return [row[n:] for row in m]


def read_ri(path):
    """(freq in Hz, S as [point][row][col], per-port references or None) of an
    `S RI` file."""
    n = int(path.suffix[2:-1])
    scale, nums, order_12_21, z0 = None, [], False, None
    for line in path.read_text(encoding="latin-1").splitlines():
        line = line.split("!", 1)[0].strip()
        if not line:
            continue
        if line.startswith("["):  # version 2 keywords (one line each in these files)
            key, _, rest = line[1:].partition("]")
            key = key.strip().lower()
            if key in ("end", "noise data"):
                break
            if key == "two-port data order":
                order_12_21 = rest.strip() == "12_21"
            if key == "reference":
                z0 = [float(t) for t in rest.split()]
            continue
        if line.startswith("#"):
            opts = line[1:].lower().split()
            assert "s" in opts and "ri" in opts, f"{path}: not S RI"
            scale = next((UNITS[o] for o in opts if o in UNITS), 1e9)
            continue
        nums.extend(float(t) for t in line.split())
    per = 1 + 2 * n * n
    f, s = [], []
    for k in range(0, len(nums) - per + 1, per):
        row = nums[k : k + per]
        v = [complex(row[1 + 2 * i], row[2 + 2 * i]) for i in range(n * n)]
        m = [v[i * n : (i + 1) * n] for i in range(n)]
        if n == 2 and not order_12_21:  # S11 S21 S12 S22 by default
            m = [[m[0][0], m[1][0]], [m[0][1], m[1][1]]]
        f.append(row[0] * scale)
        s.append(m)
    return f, s, z0


def thin(f, s, most):
    if len(f) <= most:
        return f, s
    idx = sorted({round(i * (len(f) - 1) / (most - 1)) for i in range(most)})
    return [f[i] for i in idx], [s[i] for i in idx]


def encode(f, m, flags=0, z0=None, freq_values=None):
    n = len(m[0])
    out = bytearray([(n - 1) % 4, flags])
    if z0 is not None:
        out += struct.pack(f"<{n}d", *z0)
    fv = f if freq_values is None else freq_values
    for k in range(len(f)):
        out += struct.pack("<d", fv[k])
        for z in (v for row in m[k] for v in row):
            out += struct.pack("<dd", z.real, z.imag)
    return bytes(out)


def write(folder, data):
    folder.mkdir(parents=True, exist_ok=True)
    (folder / hashlib.sha1(data).hexdigest()).write_bytes(data)


def network_seeds():
    out = CORPUS / "figures_of_network"
    coil = None
    for rel in PARTS:
        f, s, z0 = read_ri(ROOT / rel)
        f, s = thin(f, s, 64 if len(s[0]) <= 2 else 32)
        write(out, encode(f, s, flags=0 if z0 is None else 0x80, z0=z0))
        if rel.endswith("pi_coil.s2p"):
            coil = (f, s)
    f, s = coil
    n = len(s[0])
    eye = [[1.0 if i == j else 0.0 for j in range(n)] for i in range(n)]

    def plus(a, sign):
        return [[eye[i][j] + sign * a[i][j] for j in range(n)] for i in range(n)]

    def scaled(a, x):
        return [[v * x for v in row] for row in a]

    y = [scaled(solve(plus(sk, 1), plus(sk, -1)), 1 / 50.0) for sk in s]
    z = [scaled(solve(plus(sk, -1), plus(sk, 1)), 50.0) for sk in s]
    write(out, encode(f, s, flags=0x10))  # declared inductor
    write(out, encode(f, s, flags=0x20))  # declared capacitor
    write(out, encode(f, y, flags=0x04))  # Y matrices
    write(out, encode(f, z, flags=0x08))  # Z matrices
    write(out, encode(f, s, flags=0x40))  # flat: point 0's matrix everywhere
    write(out, encode(f, s, flags=0x80, z0=[25.0, 100.0]))
    steps = [b - a for a, b in zip([0.0] + f, f)]
    write(out, encode(f, s, flags=0x01, freq_values=steps))  # running sum
    write(out, encode(f, s, flags=0x03, freq_values=[f[0]] * len(f)))  # grid
    write(out, encode([0.0] + f[1:], s))  # a zero frequency
    write(out, encode([-x for x in f], s))  # negative, falling
    write(out, encode(f[::-1], s))  # falling
    write(out, encode([f[k - k % 2] for k in range(len(f))], s))  # repeated


EXPRESSIONS = [
    "q(band) >= 10",
    "l(band.mid) within 5% of l_target",
    "srf > 1.5 * band.hi and q_peak > 8",
    "min(q(2GHz .. 3GHz)) > 5 or not shielded",
    "q_drop_cause == substrate",
    "mean(r(band)) / l_low < 1e12 * 1ohm / 1nH",
    "-(-(1)) * (2 + 3) - 4 / 5 != 0.5",
    "4.9GHz .. 5.9GHz",
]


def rules_seeds():
    out = CORPUS / "load_rules"
    for folder in ["tests/data/rules", "tests/data/lib-small-rules", "rules"]:
        for p in sorted((ROOT / folder).glob("*.yaml")):
            write(out, p.read_bytes())
    for e in EXPRESSIONS:
        write(out, e.encode())


if __name__ == "__main__":
    network_seeds()
    rules_seeds()
