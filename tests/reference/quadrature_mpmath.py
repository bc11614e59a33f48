#!/usr/bin/env python3
"""Reference values for tests/prob_quadrature.rs that have no elementary closed form.

Each integral is evaluated with mpmath 1.3.0 (tanh-sinh quadrature, 40 digits, split at
the integrand's kinks) and written to tests/reference/quadrature_mpmath.csv as
`name,value` with the value rounded to the nearest double (17 significant digits).

Run:  python3 tests/reference/quadrature_mpmath.py
"""
import os

import mpmath as mp

mp.mp.dps = 40


def phi_cdf(x):
    return mp.ncdf(x)


CASES = [
    # singular endpoint without an elementary antiderivative (a Fresnel integral)
    ("cos_over_sqrt_0_1", lambda x: mp.cos(x) / mp.sqrt(x), [0, 1]),
    # damped oscillation, 25 periods
    ("exp_sin50_0_pi", lambda x: mp.exp(-x) * mp.sin(50 * x), [0, mp.pi]),
    # semi-infinite range, algebraic and exponential decay (involves Ci and Si)
    ("exp_over_1px2_0_inf", lambda x: mp.exp(-x) / (1 + x**2), [0, mp.inf]),
    # a residual-shaped integrand: P(|N(f/2, 1)| > 2) for f uniform on [-10, 10], weighted 1/20
    ("residual_like_uniform", lambda f: (phi_cdf(-2 - f / 2) + phi_cdf(f / 2 - 2)) / 20, [-10, 10]),
    # a kink at 1/3 (given to the integrator as a breakpoint) times a smooth factor
    ("kink_times_exp", lambda x: abs(x - mp.mpf(1) / 3) * mp.exp(x), [0, mp.mpf(1) / 3, 1]),
    # doubly infinite, normal density times a normal CDF of a shifted argument squared
    ("phi_times_cdf_sq", lambda x: mp.npdf(x) * phi_cdf(0.7 * x - 0.3) ** 2, [-mp.inf, 0, mp.inf]),
]

# Independent closed forms for some cases, to confirm the mpmath quadrature itself:
# 2 * integral_0^1 cos(u^2) du = sqrt(2 pi) C(sqrt(2 / pi)) with the Fresnel integral C;
# integral_0^pi exp(-x) sin(50 x) dx = 50 (1 - exp(-pi)) / 2501 (integration by parts).
CROSS_CHECKS = {
    "cos_over_sqrt_0_1": lambda: mp.sqrt(2 * mp.pi) * mp.fresnelc(mp.sqrt(2 / mp.pi)),
    "exp_sin50_0_pi": lambda: 50 * (1 - mp.exp(-mp.pi)) / 2501,
}


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    lines = ["name,value"]
    for name, f, pts in CASES:
        v = mp.quad(f, pts, maxdegree=10)
        check = CROSS_CHECKS.get(name)
        if check is not None:
            assert abs(v - check()) < mp.mpf(10) ** -20, name  # far below a double's rounding
        lines.append(f"{name},{float(v)!r}")
    with open(os.path.join(here, "quadrature_mpmath.csv"), "w") as out:
        out.write("\n".join(lines) + "\n")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
