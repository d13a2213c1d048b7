#!/usr/bin/env python3
"""Reads fieldgrade's compressed fields.vtu with a general-purpose mesh I/O library (meshio)
and checks it against the same solution written as text (--ascii-vtu).

Usage: python3 scripts/check-vtu.py FIELDGRADE_BINARY MODEL.toml
(needs `pip install meshio numpy`; `.ci/run` runs it in a virtual environment when Python is
present). Exits non-zero when a file does not read or a value differs: coordinates, cells and
ids must agree exactly, the field arrays (Float32 in the compressed file) to 1e-7 relative.
"""
import subprocess
import sys
import tempfile

import meshio
import numpy as np


def main() -> int:
    binary, model = sys.argv[1], sys.argv[2]
    with tempfile.TemporaryDirectory() as d:
        for name, extra in (("packed", []), ("text", ["--ascii-vtu"])):
            subprocess.run([binary, "solve", model, "--out", f"{d}/{name}", *extra], check=True,
                           stdout=subprocess.DEVNULL)
        packed = meshio.read(f"{d}/packed/fields.vtu")
        text = meshio.read(f"{d}/text/fields.vtu")
    assert np.array_equal(packed.points, text.points), "points differ"
    assert [c.type for c in packed.cells] == [c.type for c in text.cells], "cell types differ"
    for a, b in zip(packed.cells, text.cells):
        assert np.array_equal(a.data, b.data), f"{a.type} connectivity differs"

    def close(x, y, name):
        x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
        both_nan = np.isnan(x) & np.isnan(y)
        err = np.where(both_nan, 0.0, np.abs(x - y) / np.maximum(np.abs(y), 1e-300))
        worst = float(np.nanmax(err)) if err.size else 0.0
        print(f"{name}: {x.size} values, largest relative difference {worst:.2e}")
        assert worst <= 1e-7, f"{name} differs"

    for k in text.point_data:
        close(packed.point_data[k], text.point_data[k], k)
    for k in text.cell_data:
        for i, (x, y) in enumerate(zip(packed.cell_data[k], text.cell_data[k])):
            close(x, y, f"{k}[{i}]")
    print(f"{model}: the compressed VTU reads back through meshio {meshio.__version__} with the same values")
    return 0


if __name__ == "__main__":
    sys.exit(main())
