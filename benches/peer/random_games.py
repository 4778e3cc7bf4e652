"""Writes the benchmark set of random games without symmetry (BENCHMARKS.md, "NPA --solver auto
on games without symmetry"): two-player games with 3-6 questions and 3-6 answers each, and
three-player games with 2-3 questions and 2-3 answers each, scores uniform in [0, 1) with three
decimals, from Python's seeded `random` (seeds 1 and 2).

    python3 benches/peer/random_games.py OUT_DIR
    for f in OUT_DIR/r*.yaml; do bellgap npa "$f" --json --quiet; done           # level 1+joint
    for f in OUT_DIR/t*.yaml; do bellgap npa "$f" --level 2 --json --quiet; done  # level 2
"""

import os
import random
import sys


def two_players(q, a, seed):
    rng = random.Random(seed)
    lines = [f"name: random-{q}x{a}-s{seed}", "players:",
             f"  - {{name: alice, question: x, answer: a, questions: {q}, answers: {a}}}",
             f"  - {{name: bob, question: y, answer: b, questions: {q}, answers: {a}}}",
             "bell:", "  terms:"]
    for x in range(q):
        for y in range(q):
            for i in range(a):
                for j in range(a):
                    c = int(rng.random() * 1000) / 1000
                    lines.append(f'    - {{coefficient: {c}, event: {{alice: "{i}|{x}", bob: "{j}|{y}"}}}}')
    return "\n".join(lines) + "\n"


def three_players(q, a, seed):
    rng = random.Random(seed)
    names = [("north", "x", "a"), ("south", "y", "b"), ("west", "z", "c")]
    lines = [f"name: random3-{q}x{a}-s{seed}", "players:"]
    for n, qv, av in names:
        lines.append(f"  - {{name: {n}, question: {qv}, answer: {av}, questions: {q}, answers: {a}}}")
    lines += ["bell:", "  terms:"]
    for x in range(q):
        for y in range(q):
            for z in range(q):
                for i in range(a):
                    for j in range(a):
                        for k in range(a):
                            c = int(rng.random() * 1000) / 1000
                            lines.append(
                                f'    - {{coefficient: {c}, event: {{north: "{i}|{x}", south: "{j}|{y}", west: "{k}|{z}"}}}}'
                            )
    return "\n".join(lines) + "\n"


def main():
    out = sys.argv[1] if len(sys.argv) > 1 else "random-games"
    os.makedirs(out, exist_ok=True)
    for seed in (1, 2):
        for q in range(3, 7):
            for a in range(3, 7):
                with open(os.path.join(out, f"r{q}x{a}s{seed}.yaml"), "w") as f:
                    f.write(two_players(q, a, seed))
    for q in (2, 3):
        for a in (2, 3):
            with open(os.path.join(out, f"t{q}x{a}.yaml"), "w") as f:
                f.write(three_players(q, a, 1))


if __name__ == "__main__":
    main()
