"""ref_special_functions.py -- the special functions and Mie sums of src/scatter checked
against SciPy (scipy.special), a general-purpose reference library.

Run by CTest as: /usr/bin/python3 ref_special_functions.py <rainprint tool> <build dir>.
It runs <build dir>/test_tmatrix --dump-special, which prints one value per line:
  jy  n x j_n(x) y_n(x)                     spherical Bessel, real argument
  jc  n Re z Im z Re j_n(z) Im j_n(z)       spherical Bessel, complex argument
  wig m n theta d^n_0m pi_mn tau_mn         normalised Wigner d and angular functions
  mie x Re m Im m nmax Qext Qsca Qback Re S1(0) Im S1(0) Re S1(pi) Im S1(pi)
and compares each with an independent SciPy evaluation. The last line printed is
"N passed, N failed"; the exit status is non-zero on any failure.
"""
import math
import os
import subprocess
import sys

import numpy as np
from scipy import special

# Bessel functions: both sides are double-precision evaluations by different methods
# (downward ratio recurrence vs. SciPy's AMOS / series), so they agree to ~1e-14 of
# the function's envelope; 1e-10 leaves room for the growth of y_n at small x. Below
# the turning point (n + 1/2 < |z|) j_n and y_n oscillate and the envelope
# |j_n| + |y_n| (no zeros) is the scale, so points near a zero are judged by absolute
# accuracy, as any method's error is relative to the envelope. Above it j_n has no
# zeros and is the small (minimal) solution, |j_n| << |y_n|: there |j_n| itself is the
# scale, else the check of j_n could not fail (measured: 3e-14 relative).
TOL_BESSEL = 1e-10
# Wigner d, pi, tau: three-term recurrences vs. SciPy's lpmv with a log-gamma
# normalisation; the scale of pi_mn and tau_mn is sqrt(n(n+1)), of d it is 1.
TOL_WIGNER = 1e-10
# Mie sums: the C code uses logarithmic derivatives and ratio recurrences, this file
# direct spherical Bessel functions of complex argument (Bohren & Huffman 1983,
# eq. 4.53); both sum the same number of terms, so 1e-9 relative.
TOL_MIE = 1e-9

passed = 0
failed = 0


def check(name, got, want, scale, tol):
    """Record one comparison: |got - want| <= tol * scale."""
    global passed, failed
    err = abs(got - want)
    if not (err <= tol * scale) or not np.isfinite(got):
        failed += 1
        print(f"FAIL {name}: got {got!r}, want {want!r} (|diff| {err:.3g}, "
              f"allowed {tol * scale:.3g})")
    else:
        passed += 1


def j_scale(n, z, jr, yr):
    """Scale of the j_n check: |j_n| above the turning point, |j_n| + |y_n| below."""
    return abs(jr) if n + 0.5 > abs(z) else abs(jr) + abs(yr)


def wigner_ref(m, n, theta):
    """d^n_0m, pi_mn, tau_mn from SciPy's associated Legendre functions.

    d^n_0m(theta) = (-1)^m sqrt((n-m)!/(n+m)!) P_n^m(cos theta), where scipy's lpmv
    includes the Condon-Shortley phase; this matches the convention
    d^m_0m = +A_m sin^m theta of special.h. tau uses the standard identity
    dP_n^m/dtheta = (P_n^{m+1} - (n+m)(n-m+1) P_n^{m-1}) / 2 for m >= 1 and
    dP_n/dtheta = P_n^1 for m = 0 (both with the Condon-Shortley phase, e.g.
    Abramowitz & Stegun 1964 ch. 8). On the axis pi and tau are the analytic limits.
    """
    x = math.cos(theta)
    norm = (-1) ** m * math.exp(0.5 * (special.gammaln(n - m + 1) - special.gammaln(n + m + 1)))
    d = norm * special.lpmv(m, n, x)
    if m == 0:
        dpdt = special.lpmv(1, n, x) if n >= 1 else 0.0
    else:
        dpdt = 0.5 * (special.lpmv(m + 1, n, x)
                      - (n + m) * (n - m + 1) * special.lpmv(m - 1, n, x))
    tau = norm * dpdt
    s = math.sin(theta)
    if theta == 0.0 or theta == math.pi:
        # d^n_01 / sin -> sqrt(n(n+1))/2 at theta = 0, times (-1)^(n+1) at pi;
        # tau_1n(0) = sqrt(n(n+1))/2, tau_1n(pi) = (-1)^n sqrt(n(n+1))/2; zero for
        # m != 1 (and tau_0n = 0 on the axis).
        half = 0.5 * math.sqrt(n * (n + 1))
        if m == 1:
            sign_pi = 1.0 if theta == 0.0 else (-1.0) ** (n + 1)
            sign_tau = 1.0 if theta == 0.0 else (-1.0) ** n
            return d, sign_pi * half, sign_tau * half
        return d, 0.0, 0.0
    return d, m * d / s, tau


def mie_ref(x, m, nmax):
    """Qext, Qsca, Qback, S1(0), S1(pi) from Bohren & Huffman (1983) eq. 4.53,
    4.61, 4.62 with SciPy's spherical Bessel functions."""
    n = np.arange(1, nmax + 1)
    mx = m * x
    jx = special.spherical_jn(n, x)
    jxd = special.spherical_jn(n, x, derivative=True)
    yx = special.spherical_yn(n, x)
    yxd = special.spherical_yn(n, x, derivative=True)
    hx = jx + 1j * yx
    hxd = jxd + 1j * yxd
    jm = special.spherical_jn(n, mx)
    jmd = special.spherical_jn(n, mx, derivative=True)
    psi_x = jx + x * jxd          # [x j_n(x)]'
    xi_x = hx + x * hxd           # [x h_n(x)]'
    psi_m = jm + mx * jmd         # [mx j_n(mx)]'
    a = (m * m * jm * psi_x - jx * psi_m) / (m * m * jm * xi_x - hx * psi_m)
    b = (jm * psi_x - jx * psi_m) / (jm * xi_x - hx * psi_m)
    c = 2 * n + 1
    qext = 2.0 / x ** 2 * np.sum(c * (a + b).real)
    qsca = 2.0 / x ** 2 * np.sum(c * (abs(a) ** 2 + abs(b) ** 2))
    s1f = 0.5 * np.sum(c * (a + b))
    s1b = 0.5 * np.sum(c * (-1.0) ** n * (b - a))
    qback = 4.0 * abs(s1b) ** 2 / x ** 2
    return qext, qsca, qback, s1f, s1b


def main():
    if len(sys.argv) < 3:
        print("usage: ref_special_functions.py <tool> <build-dir>")
        print("0 passed, 1 failed")
        return 1
    exe = os.path.join(sys.argv[2], "test_tmatrix")
    out = subprocess.run([exe, "--dump-special"], capture_output=True, text=True, check=False)
    if out.returncode != 0:
        print(f"FAIL {exe} --dump-special exited {out.returncode}: {out.stderr}")
        print("0 passed, 1 failed")
        return 1
    counts = {"jy": 0, "jc": 0, "wig": 0, "mie": 0}
    for line in out.stdout.splitlines():
        f = line.split()
        if not f:
            continue
        kind = f[0]
        counts[kind] = counts.get(kind, 0) + 1
        if kind == "jy":
            n, x, j, y = int(f[1]), float(f[2]), float(f[3]), float(f[4])
            jr = special.spherical_jn(n, x)
            yr = special.spherical_yn(n, x)
            check(f"j_{n}({x})", j, jr, j_scale(n, x, jr, yr), TOL_BESSEL)
            check(f"y_{n}({x})", y, yr, abs(jr) + abs(yr), TOL_BESSEL)
        elif kind == "jc":
            n = int(f[1])
            z = complex(float(f[2]), float(f[3]))
            j = complex(float(f[4]), float(f[5]))
            jr = special.spherical_jn(n, z)
            yr = special.spherical_yn(n, z)
            check(f"j_{n}({z})", j, jr, j_scale(n, z, jr, yr), TOL_BESSEL)
        elif kind == "wig":
            m, n, th = int(f[1]), int(f[2]), float(f[3])
            d, p, t = float(f[4]), float(f[5]), float(f[6])
            dr, pr, tr = wigner_ref(m, n, th)
            sc = math.sqrt(n * (n + 1)) if n > 0 else 1.0
            check(f"d^{n}_0{m}({th})", d, dr, 1.0, TOL_WIGNER)
            check(f"pi_{m}{n}({th})", p, pr, sc, TOL_WIGNER)
            check(f"tau_{m}{n}({th})", t, tr, sc, TOL_WIGNER)
        elif kind == "mie":
            x, m = float(f[1]), complex(float(f[2]), float(f[3]))
            nmax = int(f[4])
            got = [float(f[5]), float(f[6]), float(f[7]),
                   complex(float(f[8]), float(f[9])), complex(float(f[10]), float(f[11]))]
            ref = mie_ref(x, m, nmax)
            names = ["Qext", "Qsca", "Qback", "S1(0)", "S1(pi)"]
            for nm, g, r in zip(names, got, ref):
                check(f"Mie {nm} x={x:.6g} m={m}", g, r, abs(r), TOL_MIE)
        else:
            check(f"unknown line {line!r}", 1.0, 0.0, 0.0, 0.0)
    # the dump must contain every kind (a silent empty dump is a failure)
    for kind, cnt in counts.items():
        check(f"number of '{kind}' lines", float(cnt > 0), 1.0, 0.0, 0.0)
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
