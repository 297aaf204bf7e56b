"""Reference for the per-point cost of text I/O: what a compiled parser and a chunked formatter cost here.

    python benchmarks/reference_io.py SWEEP.s1p OUT.csv

Reads the sweep's numbers with pandas' C parser (comments and the option line skipped) and writes ten
values per point as CSV, one %-format string applied to each 50 000-row chunk. benchmarks/run.py times it
as a whole process at two sweep sizes; the difference per point is the reference slope.
"""
import sys

import numpy as np
import pandas as pd


def main(src: str, dst: str) -> None:
    frame = pd.read_csv(src, sep=r"\s+", comment="!", header=None, skiprows=_header_lines(src),
                        names=["f", "re", "im"], engine="c", dtype=float)
    f = frame["f"].to_numpy() * 1e6
    g = frame["re"].to_numpy() + 1j * frame["im"].to_numpy()
    mag = np.abs(g)
    z = 50 * (1 + g) / (1 - g)
    cols = np.column_stack([f, g.real, g.imag, mag, (1 + mag) / (1 - mag), -20 * np.log10(mag), z.real, z.imag,
                            np.angle(g), mag ** 2])
    row = ",".join(["%.9g"] * cols.shape[1]) + "\n"
    with open(dst, "w") as fh:
        fh.write(",".join(f"c{i}" for i in range(cols.shape[1])) + "\n")
        for i in range(0, cols.shape[0], 50_000):
            part = cols[i:i + 50_000]
            fh.write((row * part.shape[0]) % tuple(part.ravel().tolist()))


def _header_lines(path: str) -> int:
    """Lines before the first data line (comments and the option line)."""
    k = 0
    with open(path) as fh:
        for line in fh:
            s = line.strip()
            if s and not s.startswith(("!", "#")):
                return k
            k += 1
    return k


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
