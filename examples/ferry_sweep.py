"""INVENTED SCENARIO for the examples: two ferry pilots on opposite banks each get one of m
harbour codes and must flag red or green without talking; the harbour master scores them with
the chained Bell expression of m codes. Before choosing m for their device test, they want the
classical ceiling, the verified quantum bound and an explicit quantum strategy for each m.

Run after `pip install ./python` (and `pip install matplotlib`):

    python examples/ferry_sweep.py            # writes ferry_sweep.png
    python examples/ferry_sweep.py --workers 2

The sweep runs on a process pool; with a Dask cluster, pass `client.get_executor()` instead.
"""

import argparse
import multiprocessing
from concurrent.futures import ProcessPoolExecutor

import bellgap


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--output", default="ferry_sweep.png")
    args = parser.parse_args()

    codes = list(range(2, 9))
    games = [bellgap.Game.family("chained", m=m) for m in codes]
    # "spawn": forked workers of a process running Rust thread pools can deadlock.
    with ProcessPoolExecutor(args.workers, mp_context=multiprocessing.get_context("spawn")) as pool:
        rows = bellgap.sweep("bounds", games, executor=pool, as_frame=False)
    for m, row in zip(codes, rows):
        if not row["ok"]:
            print(f"m = {m}: {row['error']['message']}")
            continue
        print(
            f"m = {m}: classical {row['classical']:.6f}, "
            f"quantum between {row['quantum_lower']:.6f} and {row['verified_upper']:.6f}"
        )

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    ok = [(m, r) for m, r in zip(codes, rows) if r["ok"]]
    fig, ax = plt.subplots(figsize=(6, 4))
    ax.plot([m for m, _ in ok], [r["classical"] for _, r in ok], "o-", label="classical")
    ax.plot([m for m, _ in ok], [r["quantum_lower"] for _, r in ok], "s-", label="see-saw (quantum ≥)")
    ax.plot([m for m, _ in ok], [r["verified_upper"] for _, r in ok], "^--", label="NPA (quantum ≤, verified)")
    ax.set_xlabel("harbour codes m")
    ax.set_ylabel("value of the chained expression")
    ax.set_title("Ferry pilots' test: bounds against the number of codes")
    ax.legend()
    fig.tight_layout()
    fig.savefig(args.output, dpi=120)
    print(f"plot written to {args.output}")


if __name__ == "__main__":
    main()
