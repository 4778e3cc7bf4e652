"""Plain certificates of every bundled game, re-proven by the independent checker
(scripts/check_certificate.py, standard library only) and by `bellgap verify --exact` on the
JSON certificate of the same solve: both accept, and the bounds they prove agree. Tampered
certificates (a dual entry changed, a word dropped, another game's table) are refused."""

import glob
import json
import os
import re
import subprocess
import sys
from fractions import Fraction

import pytest

from test_bellgap import ROOT, binary

CHECKER = os.path.join(ROOT, "scripts", "check_certificate.py")
GAMES = sorted(glob.glob(os.path.join(ROOT, "games", "*.yaml")))


def check(path):
    """The checker's verdict: (exit code, the proven bound or None, its output)."""
    out = subprocess.run([sys.executable, CHECKER, path], capture_output=True, text=True)
    m = re.search(r"quantum value <= (-?\d+)/(\d+)", out.stdout)
    return out.returncode, (Fraction(int(m[1]), int(m[2])) if m else None), out.stdout


def certify(game, folder):
    """Solves the game at level 1+joint once and writes both certificates of that solve."""
    name = os.path.splitext(os.path.basename(game))[0]
    plain = os.path.join(folder, f"{name}.txt")
    dual = os.path.join(folder, f"{name}.json")
    out = subprocess.run(
        [binary(), "npa", game, "--level", "1+joint", "--exact-certificate", plain,
         "--certificate", dual, "--quiet"],
        cwd=ROOT, capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    return plain, dual


@pytest.mark.parametrize("game", GAMES, ids=lambda g: os.path.basename(g))
def test_checker_and_exact_verification_agree_on_every_bundled_game(game, tmp_path):
    plain, dual = certify(game, str(tmp_path))
    code, checked, text = check(plain)
    assert code == 0 and checked is not None, text
    out = subprocess.run([binary(), "verify", game, dual, "--exact", "--json"], cwd=ROOT,
                         capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    verified = json.loads(out.stdout)
    exact = Fraction(verified["exact"]["fraction"])
    # The same dual, proven twice: they differ only in how the table's coefficients of one
    # moment are summed (the checker in fractions, bellgap in binary64 first).
    assert abs(checked - exact) <= Fraction(1, 10**12) * (1 + abs(exact)), (checked, exact)
    claim = Fraction(re.search(r"^claim (\S+)$", open(plain).read(), re.M)[1])
    assert checked <= claim and exact <= Fraction(verified["claimed"]) * (1 + Fraction(1, 10**12))


def test_tampered_plain_certificates_are_refused(tmp_path):
    plain, _ = certify(os.path.join(ROOT, "games", "chsh.yaml"), str(tmp_path))
    lines = open(plain).read().splitlines()
    assert check(plain)[0] == 0

    def refused(edit, name):
        path = os.path.join(str(tmp_path), name)
        with open(path, "w") as f:
            f.write("\n".join(edit(list(lines))) + "\n")
        code, _, text = check(path)
        assert code != 0, (name, text)

    def change_dual_entry(ls):
        k = next(i for i, l in enumerate(ls) if l.startswith("z "))
        parts = ls[k].split()
        parts[-1] = str(int(parts[-1]) * 2 + (1 << 110))
        ls[k] = " ".join(parts)
        return ls

    def drop_word(ls):
        k = max(i for i, l in enumerate(ls) if l.startswith("w "))
        del ls[k]
        return ls

    def other_table(ls):
        # CHSH with one player's answers relabelled: the same quantum value, but this dual is
        # not its certificate (its residuals are charged in full).
        return [("c 0" if l == "c 1/4" else "c 1/4" if l == "c 0" else l) for l in ls]

    refused(change_dual_entry, "dual.txt")
    refused(drop_word, "word.txt")
    refused(other_table, "table.txt")


def test_an_exact_guessing_probability_from_python_matches_the_command_line():
    import bellgap
    from test_bellgap import assert_same, cli_json, without_timing

    chsh = os.path.join(ROOT, "games", "chsh.yaml")
    r = bellgap.randomness(chsh, score=0.85, exact=True).to_dict()
    exact = r["exact"]
    # 0.6 at CHSH value 2.8 (Pironio et al., Nature 464, 1021 (2010)).
    assert 0.6 - 1e-12 <= exact["rounded_up"] < 0.6 + 1e-7
    assert Fraction(exact["fraction"]) <= Fraction(exact["rounded_up"])
    assert_same(without_timing(r),
                without_timing(cli_json("randomness", "games/chsh.yaml", "--score", "0.85",
                                        "--exact")))
