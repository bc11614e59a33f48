#!/usr/bin/env python3
"""Nodes and weights of the 6-, 12- and 20-point Gauss-Legendre rules on [-1, 1].

Generated with mpmath 1.3.0 at 40 significant digits (mp.dps = 40): each node is a root
of the Legendre polynomial P_n, found by Newton's method from the usual cosine start,
and its weight is 2 / ((1 - x^2) P_n'(x)^2) (Abramowitz and Stegun 25.4.29). The values
agree with Abramowitz and Stegun Table 25.4 to the digits printed there (from memory).

Prints the positive nodes (descending) and their weights as Rust constant tables, the
form used in src/prob/legendre.rs. Run: python3 tests/reference/gauss_legendre_mpmath.py
"""
import mpmath as mp

mp.mp.dps = 40


def legendre_and_derivative(n, x):
    """P_n(x) and P_n'(x) by the three-term recurrence."""
    p_prev, p = mp.mpf(1), x
    for j in range(2, n + 1):
        p_prev, p = p, ((2 * j - 1) * x * p - (j - 1) * p_prev) / j
    dp = n * (x * p - p_prev) / (x * x - 1)
    return p, dp


def rule(n):
    out = []
    for i in range(1, n // 2 + 1):
        x = mp.cos(mp.pi * (i - mp.mpf(1) / 4) / (n + mp.mpf(1) / 2))
        for _ in range(100):
            p, dp = legendre_and_derivative(n, x)
            step = p / dp
            x -= step
            if abs(step) < mp.mpf(10) ** (-38):
                break
        _, dp = legendre_and_derivative(n, x)
        w = 2 / ((1 - x * x) * dp * dp)
        out.append((x, w))
    return out


for n in (6, 12, 20):
    nodes = rule(n)
    print(f"/// Positive nodes of the {n}-point rule, descending.")
    print(f"pub const NODES_{n}: [f64; {n // 2}] = [")
    for x, _ in nodes:
        print(f"    {mp.nstr(x, 25, min_fixed=-1, max_fixed=1)},")
    print("];")
    print(f"/// Weights of the {n}-point rule, paired with [`NODES_{n}`].")
    print(f"pub const WEIGHTS_{n}: [f64; {n // 2}] = [")
    for _, w in nodes:
        print(f"    {mp.nstr(w, 25, min_fixed=-1, max_fixed=1)},")
    print("];")
