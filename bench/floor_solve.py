"""The floor for `calcdoc solve --json` on a grid: parse, assemble, solve, print.

The fastest installed TOML parser (tomli's compiled wheel when present,
else the standard library's tomllib) + scipy.sparse assembly + SuperLU
solve of the same file, with no validation, checks or verification: what
any tool must at least do.
"""

from __future__ import annotations

import json
import sys

import numpy as np
from scipy.sparse import csc_matrix
from scipy.sparse.linalg import spsolve

try:
    import tomli as tomllib
except ImportError:  # pragma: no cover
    import tomllib  # type: ignore[no-redef]


def main(path: str) -> None:
    with open(path, "rb") as fh:
        data = tomllib.load(fh)
    ref = data["circuit"]["reference"]
    idx = {ref: 0}
    rows, cols, vals = [], [], []
    z = {}
    for e in data["elements"].values():
        a, b = (idx.setdefault(n, len(idx)) for n in e["nodes"])
        if e["type"] == "resistor":
            g = 1.0 / (float(e["value"].split()[0]) * 1000.0)
            rows += [a, a, b, b]
            cols += [a, b, a, b]
            vals += [g, -g, -g, g]
        else:
            i = float(e["value"].split()[0]) * 1e-3
            z[a] = z.get(a, 0.0) - i
            z[b] = z.get(b, 0.0) + i
    n = len(idx)
    r, c, v = np.array(rows) - 1, np.array(cols) - 1, np.array(vals)
    keep = (r >= 0) & (c >= 0)
    A = csc_matrix((v[keep], (r[keep], c[keep])), shape=(n - 1, n - 1))
    rhs = np.zeros(n - 1)
    for k, val in z.items():
        if k:
            rhs[k - 1] += val
    x = spsolve(A, rhs)
    names = list(idx)
    json.dump({"nodes": dict(zip(names, [0.0, *x.tolist()], strict=True))}, sys.stdout)


if __name__ == "__main__":
    main(sys.argv[1])
