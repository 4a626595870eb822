"""How well the search fidelity ranks designs: coarse against the machine's own mesh.

Draws ``--samples`` designs (Latin hypercube, ``--seed``) over the parameters of an
optimisation file, evaluates each at the file's search fidelity and at the machine's own
mesh (two sweeps through the result store, so a rerun reads what is stored), and prints the
Spearman rank correlation (scipy.stats.spearmanr) of each objective and constraint figure
between the two, with the mean relative difference and the times.

    OPENBLAS_NUM_THREADS=1 python benchmarks/fidelity_rank.py geometries/optimize_demo.toml \
        --out out/fidelity_rank --samples 30 --workers 2

A rank correlation near 1 means the coarse search orders designs as the fine mesh would,
which is what a search needs; the verify step corrects the values of the chosen ones.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
from scipy.stats import spearmanr

from fluxlab.optimize import load_optimisation
from fluxlab.sweep import run_sweep, sweep_from_dict


def _sweep(opt, fixed: dict, samples: int, seed: int):
    data = {"name": f"{opt.name} ({'search' if fixed else 'own'} mesh)",
            "base": str(opt.base_path), "studies": opt.studies,
            "plan": {"kind": "lhs", "samples": samples, "seed": seed},
            "fixed": {**opt.fixed, **fixed},
            "parameters": [{"path": p.path, "low": p.low, "high": p.high}
                           for p in opt.parameters]}
    return sweep_from_dict(data)


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("optimisation")
    parser.add_argument("--out", required=True)
    parser.add_argument("--samples", type=int, default=30)
    parser.add_argument("--seed", type=int, default=11)
    parser.add_argument("--workers", type=int, default=2)
    args = parser.parse_args(argv)
    opt = load_optimisation(args.optimisation)
    rows, times = {}, {}
    for name, fixed in (("search", opt.fidelity), ("own", {})):
        start = time.perf_counter()
        rows[name] = run_sweep(_sweep(opt, fixed, args.samples, args.seed),
                               Path(args.out) / name, workers=args.workers, progress=True)
        times[name] = time.perf_counter() - start
    figures = opt.figures
    both = [(a, b) for a, b in zip(rows["search"], rows["own"], strict=True)
            if a["status"] == b["status"] == "done"]
    print(f"{len(both)} of {args.samples} designs evaluated at both fidelities "
          f"(search mesh {opt.fidelity}); wall time search {times['search']:.0f} s, "
          f"own mesh {times['own']:.0f} s, {args.workers} workers")
    for figure in figures:
        coarse = np.array([a[figure] for a, _ in both], float)
        fine = np.array([b[figure] for _, b in both], float)
        rho = spearmanr(coarse, fine).statistic
        rel = np.mean(np.abs(coarse - fine) / np.abs(fine))
        print(f"{figure}: Spearman rho {rho:.3f}, mean |coarse - fine| / |fine| "
              f"{100 * rel:.2f} %")


if __name__ == "__main__":
    main()
