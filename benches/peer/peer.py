"""Runs each exported NPA case with bellgap and with SCS through cvxpy, each in its own process
(so its peak memory is its own), and prints a Markdown table side by side.

The SCS model is the obvious one: a symmetric matrix variable constrained PSD, entries tied to
their moment (equal to the moment's first entry), zero and identity entries fixed, and the
game's value, as a linear function of the moments, maximised. Default SCS settings.
"""
import argparse
import json
import os
import subprocess
import sys
import time


def scs_case(path):
    import numpy as np
    import cvxpy as cp

    case = json.load(open(path))
    n = case["size"]
    rows, cols, codes = [], [], []
    k = 0
    for col in range(n):
        for row in range(col + 1):
            rows.append(row)
            cols.append(col)
            codes.append(case["upper"][k])
            k += 1
    rows, cols, codes = np.array(rows), np.array(cols), np.array(codes)
    x = cp.Variable((n, n), symmetric=True)
    constraints = [x >> 0]
    zero = codes == -1
    one = codes == -2
    if zero.any():
        constraints.append(x[rows[zero], cols[zero]] == 0)
    if one.any():
        constraints.append(x[rows[one], cols[one]] == 1)
    moment = codes >= 0
    first = {}
    tied_a, tied_b = [], []
    for r, c, m in zip(rows[moment], cols[moment], codes[moment]):
        if m in first:
            tied_a.append((r, c))
            tied_b.append(first[m])
        else:
            first[m] = (r, c)
    if tied_a:
        a = np.array(tied_a)
        b = np.array(tied_b)
        constraints.append(x[a[:, 0], a[:, 1]] == x[b[:, 0], b[:, 1]])
    terms = [(m, c) for m, c in enumerate(case["objective"]) if c != 0.0]
    idx = np.array([first[m] for m, _ in terms])
    coef = np.array([c for _, c in terms])
    objective = coef @ x[idx[:, 0], idx[:, 1]] + case["constant"]
    problem = cp.Problem(cp.Maximize(objective), constraints)
    start = time.time()
    value = problem.solve(solver=cp.SCS)
    print(json.dumps({"value": value, "status": problem.status, "seconds": time.time() - start}))


def main():
    p = argparse.ArgumentParser()
    p.add_argument("--cases", required=True)
    p.add_argument("--bellgap", required=True)
    p.add_argument("--timeout", type=float, default=600)
    p.add_argument("--only", nargs="*", type=int)
    p.add_argument("--scs-case")
    a = p.parse_args()
    if a.scs_case:
        scs_case(a.scs_case)
        return
    print("| case | level | matrix | moments | bellgap s | bellgap MiB | bellgap solver | bellgap verified bound | SCS s | SCS MiB | SCS value | SCS status |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|")
    files = sorted(f for f in os.listdir(a.cases) if f.endswith(".json"))
    for i, f in enumerate(files):
        if a.only and i not in a.only:
            continue
        case = json.load(open(os.path.join(a.cases, f)))
        yaml = os.path.join(a.cases, f[:-5] + ".yaml")
        # Each run in a fresh child: RUSAGE_CHILDREN is a maximum over finished children, so
        # runs go from a fresh interpreter per pair to keep the figures apart.
        cells = []
        for command in (
            [a.bellgap, "npa", yaml, "--level", case["level"], "--json", "--force",
             "--budget", str(a.timeout)],
            [sys.executable, __file__, "--cases", a.cases, "--bellgap", a.bellgap,
             "--scs-case", os.path.join(a.cases, f)],
        ):
            wrapped = [sys.executable, "-c",
                       "import resource,subprocess,sys,json;"
                       "r=subprocess.run(sys.argv[1:],capture_output=True,text=True);"
                       "print(json.dumps({'out':r.stdout,'peak':resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss/1024}))"]
            start = time.time()
            try:
                done = subprocess.run(wrapped + command, capture_output=True, text=True, timeout=a.timeout + 60)
            except subprocess.TimeoutExpired:
                cells.append(None)
                continue
            seconds = time.time() - start
            try:
                result = json.loads(done.stdout)
                cells.append((json.loads(result["out"]), seconds, result["peak"]))
            except (ValueError, KeyError):
                cells.append(None)
        bg, scs = cells
        row = [case["name"], case["level"], f"{case['size']}×{case['size']}", str(case["moments"])]
        if bg:
            npa = bg[0]
            row += [f"{bg[1]:.2f}", f"{bg[2]:.0f}", f"{npa['solver']} ({npa['status']})", f"{npa['verified_upper']:.9f}"]
        else:
            row += ["timeout", "", "", ""]
        if scs:
            row += [f"{scs[1]:.2f}", f"{scs[2]:.0f}", f"{scs[0]['value']:.9f}", scs[0]["status"]]
        else:
            row += [f"> {a.timeout:.0f} (stopped)", "", "", ""]
        print("| " + " | ".join(row) + " |", flush=True)


if __name__ == "__main__":
    main()
