#!/usr/bin/env python3
"""ref_dsd_moments.py — truncated gamma-DSD moments and derived quantities printed by
`test_dsd --dump` against an independent computation with SciPy (a general-purpose
reference library): scipy.integrate.quad for every integral, scipy.special.gammainc
(regularised lower incomplete gamma) for the closed forms, scipy.optimize.brentq for
the median volume diameter.

Usage: ref_dsd_moments.py <rainprint tool> <build dir>   (the tool is not used)
Prints one line per check and closes with "N passed, N failed"; exits 1 on failure.
"""
import math
import os
import subprocess
import sys

from scipy import integrate, optimize, special

# Tolerances (relative):
# - quad is asked for 1e-12 relative; the library's closed forms and its rain-rate
#   quadrature (1e-10 relative) sit well inside 1e-8.
TOL_QUAD = 1e-8
# - gammainc and gsl_sf_gamma_inc_P are both good to ~1e-14 in this range; 1e-10 leaves
#   room for the differences of two of them.
TOL_CLOSED = 1e-10
# - D0 solved with brentq to xtol 1e-14 mm on the gammainc cumulative fraction.
TOL_D0 = 1e-9

RHO_W_G_MM3 = 1e-3  # 1 g cm^-3


def atlas_v(d):
    """Atlas, Srivastava & Sekhon (1973) fall speed (m/s), clipped at 0."""
    return max(0.0, 9.65 - 10.3 * math.exp(-0.6 * d))


ATLAS_ZERO = math.log(10.3 / 9.65) / 0.6  # where the clip acts (0.109 mm)


def upper_gamma(a, x):
    """Unnormalised upper incomplete gamma Gamma(a, x), x > 0, any non-integer a: for
    a <= 0 by the recurrence Gamma(a, x) = (Gamma(a+1, x) - x^a e^-x) / a (integration by
    parts; Abramowitz & Stegun 6.5.22, from memory), else via scipy.special.gammaincc."""
    if a > 0:
        return special.gamma(a) * special.gammaincc(a, x)
    return (upper_gamma(a + 1.0, x) - x ** a * math.exp(-x)) / a


def quad(f, a, b, extra=()):
    pts = [p for p in extra if a < p < b]
    val, _ = integrate.quad(f, a, b, points=pts or None, epsabs=0.0, epsrel=1e-12,
                            limit=200)
    return val


def main():
    if len(sys.argv) < 3:
        print("usage: ref_dsd_moments.py <tool> <build-dir>")
        print("0 passed, 1 failed")
        return 1
    exe = os.path.join(sys.argv[2], "test_dsd")
    out = subprocess.run([exe, "--dump"], capture_output=True, text=True, check=False)
    passed = failed = 0

    def check(name, got, want, tol):
        nonlocal passed, failed
        rel = abs(got - want) / abs(want) if want != 0 else abs(got)
        ok = rel <= tol
        print(f"{'ok  ' if ok else 'FAIL'} {name}: rainprint {got:.15g} scipy {want:.15g} "
              f"rel {rel:.2e} (tol {tol:g})")
        if ok:
            passed += 1
        else:
            failed += 1

    if out.returncode != 0 or not out.stdout.strip():
        print(f"FAIL {exe} --dump exited {out.returncode}: {out.stderr.strip()}")
        print("0 passed, 1 failed")
        return 1

    for line in out.stdout.strip().splitlines():
        kv = dict(item.split("=", 1) for item in line.split())
        case = kv.pop("case")
        v = {k: float(x) for k, x in kv.items()}
        n0, mu, lam, dmin, dmax = v["n0"], v["mu"], v["lambda"], v["dmin"], v["dmax"]
        mode = max(mu / lam, dmin)  # peak of N(D); a good split point for quad

        def nd(d):
            return n0 * d ** mu * math.exp(-lam * d)

        brk = (mode, ATLAS_ZERO, (mu + 4.0) / lam)
        for key in [k for k in v if k.startswith("M")]:
            n = float(key[1:])
            m_quad = quad(lambda d: d ** n * nd(d), dmin, dmax, brk)
            check(f"case {case} {key} vs quad", v[key], m_quad, TOL_QUAD)
            a = mu + n + 1.0
            if a > 0:
                m_closed = (n0 * special.gamma(a) / lam ** a *
                            (special.gammainc(a, lam * dmax) - special.gammainc(a, lam * dmin)))
            else:
                m_closed = n0 / lam ** a * (upper_gamma(a, lam * dmin) -
                                            upper_gamma(a, lam * dmax))
            check(f"case {case} {key} vs gammainc", v[key], m_closed, TOL_CLOSED)

        m3 = quad(lambda d: d ** 3 * nd(d), dmin, dmax, brk)
        m4 = quad(lambda d: d ** 4 * nd(d), dmin, dmax, brk)
        dm = m4 / m3
        w = math.pi / 6.0 * RHO_W_G_MM3 * m3
        check(f"case {case} Nt", v["nt"], quad(nd, dmin, dmax, brk), TOL_QUAD)
        check(f"case {case} W", v["lwc"], w, TOL_QUAD)
        check(f"case {case} Dm", v["dm"], dm, TOL_QUAD)
        sig2 = quad(lambda d: (d - dm) ** 2 * d ** 3 * nd(d), dmin, dmax, brk) / m3
        check(f"case {case} sigma_m", v["sigma_m"], math.sqrt(sig2), TOL_QUAD)
        # Testud et al. (2001): Nw = 4^4 W / (pi rho_w Dm^4)
        check(f"case {case} Nw", v["nw"], 256.0 * w / (math.pi * RHO_W_G_MM3 * dm ** 4),
              TOL_QUAD)
        r = 6.0 * math.pi * 1e-4 * quad(lambda d: atlas_v(d) * d ** 3 * nd(d), dmin, dmax, brk)
        check(f"case {case} R (Atlas)", v["rain_rate"], r, TOL_QUAD)
        check(f"case {case} Z", v["z"], quad(lambda d: d ** 6 * nd(d), dmin, dmax, brk),
              TOL_QUAD)
        a3 = mu + 4.0
        p_lo = special.gammainc(a3, lam * dmin)
        half = 0.5 * (special.gammainc(a3, lam * dmax) - p_lo)
        d0 = optimize.brentq(lambda d: special.gammainc(a3, lam * d) - p_lo - half,
                             dmin, dmax, xtol=1e-14, rtol=1e-15)
        check(f"case {case} D0", v["d0"], d0, TOL_D0)

    print(f"{passed} passed, {failed} failed")
    return 0 if failed == 0 and passed > 0 else 1


if __name__ == "__main__":
    sys.exit(main())
