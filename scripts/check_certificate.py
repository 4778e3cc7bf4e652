#!/usr/bin/env python3
"""Re-proves the bound of a bellgap plain certificate (`bellgap npa --exact-certificate FILE`)
in exact rational arithmetic, with the standard library alone. Usage: FILE [FILE ...].
Trusted: only the data (game table, generating words, dual Z, factor L, shift rho).
1. Z' = Z + rho I is PSD: Z' - L L^T is diagonally dominant with a non-negative diagonal.
2. Moment matrix entries u^dagger v are reduced by the rules of projective measurements
   (players commute, P P = P, answers of one question orthogonal); w and w^dagger share a moment.
3. Weak duality: value = c0 + sum c_m y_m <= c0 + <Z', F_1> + sum_m |c_m + <Z', F_m>|, since
   <Z', Gamma> >= 0 and every moment of projectors lies in [-1, 1]."""
import math
import sys
from fractions import Fraction


def canonical(word):  # players commute (stable sort); P P = P; answers of a question: zero
    out = []
    for p in sorted(word, key=lambda t: t[0]):
        if out and out[-1][0] == p[0] and out[-1][1] == p[1]:
            if out[-1][2] == p[2]:
                continue
            return None
        out.append(p)
    return tuple(out)


def adjoint(word):  # each player's operators reversed; players stay in order
    out, i = [], 0
    while i < len(word):
        j = i
        while j < len(word) and word[j][0] == word[i][0]:
            j += 1
        out.extend(reversed(word[i:j]))
        i = j
    return tuple(out)


def moment(word):
    return min(word, adjoint(word))


def digits(k, radices):  # mixed radix, the first most significant
    return [k // math.prod(radices[i + 1:]) % r for i, r in enumerate(radices)]


def parse(path):
    cert = {"players": [], "table": [], "words": [], "z": {}, "l": {}}
    with open(path, encoding="utf-8") as f:
        lines = [l.split("#")[0].split() for l in f]
    lines = [l for l in lines if l]
    if lines[0] != ["bellgap", "plain", "certificate", "1"]:
        raise ValueError("not a bellgap plain certificate, version 1")
    for parts in lines[1:]:
        tag, rest = parts[0], parts[1:]
        if tag == "game":
            cert["game"] = rest[0]
        elif tag == "player":
            cert["players"].append((rest[0], int(rest[1]), int(rest[2])))
        elif tag in ("offset", "claim"):
            cert[tag] = Fraction(rest[0])
        elif tag == "c":
            cert["table"].append(Fraction(rest[0]))
        elif tag == "w":
            cert["words"].append(tuple(tuple(int(x) for x in t.split(":")) for t in rest))
        elif tag in ("zbits", "lbits", "rho"):
            cert[tag] = int(rest[0])
        elif tag in ("z", "l"):
            cert[tag][(int(rest[0]), int(rest[1]))] = int(rest[2])
        elif tag not in ("table", "words", "end"):
            raise ValueError(f"unknown line `{tag}`")
    return cert


def value_functional(cert):  # p(a|q) = prod of A_{a|x}, or 1 - sum_b A_{b|x} for the last answer
    players = cert["players"]
    nq = [p[1] for p in players]
    na = [p[2] for p in players]
    joint_a = math.prod(na)
    coef = {(): cert["offset"]}
    for k, c in enumerate(cert["table"]):
        if c == 0:
            continue
        q, a = divmod(k, joint_a)
        qd, ad = digits(q, nq), digits(a, na)
        terms = [(Fraction(1), ())]
        for i, (x, b) in enumerate(zip(qd, ad)):
            if b < na[i] - 1:
                choices = [(1, ((i, x, b),))]
            else:
                choices = [(1, ())] + [(-1, ((i, x, o),)) for o in range(na[i] - 1)]
            terms = [(t * s, w + v) for t, w in terms for s, v in choices]
        for t, w in terms:
            key = moment(canonical(w))
            coef[key] = coef.get(key, 0) + c * t
    return coef


def check(path):
    cert = parse(path)
    words, n = cert["words"], len(cert["words"])
    if len(cert["table"]) != math.prod(p[1] * p[2] for p in cert["players"]):
        raise ValueError("the table's length does not match the players")
    ps = cert["players"]
    if any(not (p < len(ps) and x < ps[p][1] and b < ps[p][2]) for w in words for (p, x, b) in w):
        raise ValueError("a word names a question or answer the game does not have")
    zscale, lscale = cert["zbits"], cert["lbits"]
    top = max(zscale, 2 * lscale)
    # 1. Z' - L L^T = Z + rho I - L L^T, on the grid 2^-top, diagonally dominant.
    z = [[0] * n for _ in range(n)]
    for (i, j), v in cert["z"].items():
        z[i][j] = z[j][i] = v << (top - zscale)
    for i in range(n):
        z[i][i] += cert["rho"] << (top - zscale)
    rows = [[0] * n for _ in range(n)]
    for (i, t), v in cert["l"].items():
        rows[i][t] = v
    for i in range(n):
        m = [z[i][j] - (sum(a * b for a, b in zip(rows[i], rows[j])) << (top - 2 * lscale)) for j in range(n)]
        if m[i] < sum(abs(v) for j, v in enumerate(m) if j != i):
            raise ValueError(f"Z + rho I - L L^T is not diagonally dominant in row {i}")
    # 2 and 3. <Z', F_m> per moment, then weak duality.
    inner = {}
    for i in range(n):
        for j in range(i, n):
            prod = canonical(adjoint(words[i]) + words[j])
            entry = z[i][j]
            if prod is None or entry == 0:
                continue
            key = moment(prod)
            inner[key] = inner.get(key, 0) + Fraction(entry * (1 if i == j else 2), 1 << top)
    coef = value_functional(cert)
    for k in [k for k in coef if k and k not in inner]:  # not in the matrix: charged in full
        inner[k] = Fraction(0)
    bound = coef.get((), 0) + inner.get((), 0)
    bound += sum(abs(coef.get(k, 0) + v) for k, v in inner.items() if k)
    if bound > cert["claim"]:
        raise ValueError(f"proves only {float(bound)!r}, not the claimed {float(cert['claim'])!r}")
    return cert["game"], bound


if __name__ == "__main__":
    failed = False
    for path in sys.argv[1:]:
        try:
            game, b = check(path)
            print(f"{path}: {game}: quantum value <= {b.numerator}/{b.denominator} ~ {float(b)!r}")
        except (ValueError, OSError, KeyError, IndexError) as e:
            print(f"{path}: NOT PROVEN: {e}")
            failed = True
    sys.exit(1 if failed else 0)
