"""Assembly time and memory of the global stiffness for generated 2D and 3D lattices (invented data).

Prints, per size, the median wall time of `audit.stiffness.assemble` over --repeat runs and the peak
traced memory of one run (tracemalloc: numpy allocations included), with the matrix size.
Run: python benchmarks/bench_assembly.py --sizes grid2d:1e5 lattice3d:1e5 --repeat 5
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate import build, grid2d_size, lattice3d_size

from audit.stiffness import assemble


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__)
    p.add_argument("--sizes", nargs="+", default=["grid2d:1e5", "lattice3d:1e5"])
    p.add_argument("--repeat", type=int, default=5)
    args = p.parse_args(argv)
    print(f"{'model':<22}{'members':>10}{'dofs':>10}{'nnz(K)':>12}{'median s':>10}{'peak MiB':>10}")
    for spec in args.sizes:
        kind, _, size = spec.partition(":")
        m = grid2d_size(float(size)) if kind == "grid2d" else lattice3d_size(float(size))
        model, _ = build(kind, m)
        times = []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            K = assemble(model)
            times.append(time.perf_counter() - t0)
        tracemalloc.start()
        K = assemble(model)
        _cur, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        print(
            f"{spec:<22}{model.n_members:>10}{model.n_dofs:>10}{K.nnz:>12}"
            f"{statistics.median(times):>10.3f}{peak / 2**20:>10.1f}"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
