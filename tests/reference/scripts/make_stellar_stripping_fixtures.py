"""Reference values for the tidal stripping of stars embedded in NFW subhaloes
(src/galaxies/stellar_stripping.rs; tests/validation/val_galaxies.rs,
`val_stellar_stripping_vs_scipy`).

The model is Errani et al. 2022 (MNRAS 511, 6001; arXiv 2021): stars are a massless tracer of
an NFW halo whose energy distribution is
    dN/de = e^3 exp[-(e/e_s)^3],  e = 1 - E/Phi_0          (their eq. 13, alpha = beta = 3)
with Phi_0 = Phi(r = 0). Tides keep the tracer with
    f(e) = 1 / [1 + (0.85 e / e_mxt)^12]                    (their eq. 9)
    e_mxt = 0.77 (M_mx / M_mx0)^0.43                          (their eq. 10)
where M_mx is the mass inside r_max. The equations were read from the authors' public worked
example of them; the scale energy e_s = 10^-0.32 gives R_h0/r_mx0 = 1/4 there ("see Fig. 10").

This script computes, with scipy.integrate.quad, two things the Rust code computes by its own
route:

1. the bound fraction L/L0 = int f dN/de de / int dN/de de over e in (0, 1), on a grid of
   e_s and M_mx/M_mx0;
2. the half-light radii of the tracer (3D, and projected on the sky) in units of r_max of
   the NFW (2.16258 r_s), on a grid of e_s. Route here: the isotropic distribution function
   F(e) = (dN/de) / g(e), with the density of states g(e) = 16 pi^2 int r^2 sqrt(2 (E - Phi))
   dr, then the density rho(r) = 4 pi int F(e) sqrt(2 (E - Phi(r))) dE, then the enclosed
   and projected counts. (The Rust code instead sums, energy by energy, the fraction of each
   energy's phase-space volume inside r; the two routes agree only if both are right.)

Units: r_s = 1, 4 pi G rho_s r_s^2 = 1, so Phi(r) = -ln(1 + r)/r and Phi_0 = -1.

Run from the repo root: python tests/reference/scripts/make_stellar_stripping_fixtures.py
(scipy, numpy as pinned in tests/reference/requirements.txt; ~1 min); writes
tests/reference/stellar_stripping.json.
"""

import datetime
import json
import os

import numpy as np
import scipy
from scipy.integrate import quad
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(os.path.dirname(HERE), "stellar_stripping.json")

LOG10_ES_FRACTION = [-2.2, -1.6, -1.2, -0.8, -0.32]
MMX_RATIO = [0.3, 0.1, 0.03, 0.01, 0.003, 0.001, 1e-4, 1e-5]
LOG10_ES_RADIUS = [-2.0, -1.6, -1.2, -0.8, -0.5, -0.32]
# r_max / r_s of an NFW profile: the root of d(mu(x)/x)/dx = 0
X_MAX = brentq(lambda x: x * x / (1 + x) ** 2 - (np.log1p(x) - x / (1 + x)), 1.0, 4.0,
               xtol=1e-14)


def psi(r):
    """-Phi(r) in units of |Phi_0|."""
    return np.log1p(r) / r if r > 1e-8 else 1.0 - 0.5 * r


def dnde(e, es):
    return e**3 * np.exp(-((e / es) ** 3))


def bound_fraction(es, mmx):
    emxt = 0.77 * mmx**0.43
    kept = quad(lambda e: dnde(e, es) / (1.0 + (0.85 * e / emxt) ** 12), 0.0, 1.0,
                epsabs=0.0, epsrel=1e-11, limit=400, points=[emxt, es])[0]
    total = quad(lambda e: dnde(e, es), 0.0, 1.0, epsabs=0.0, epsrel=1e-11, limit=400,
                 points=[es])[0]
    return kept / total


def r_of_energy(e):
    """Largest radius reached at energy e (psi(r) = 1 - e)."""
    if e >= 1.0:
        return np.inf
    return brentq(lambda r: psi(r) - (1.0 - e), 1e-14, 1e12, xtol=1e-15, rtol=1e-14)


def density_of_states(e):
    re = r_of_energy(e)
    return 16 * np.pi**2 * quad(lambda r: r * r * np.sqrt(max(2 * (psi(r) - 1 + e), 0.0)),
                                0.0, re, epsabs=0.0, epsrel=1e-10, limit=400)[0]


def half_light_radii(es):
    # F(e) on a fine grid in log e (the tracer at e < 1e-5 carries < 1e-11 of the count for
    # e_s >= 10^-2; the DF route fails below about 10^-2.4, where quad cannot resolve it)
    log_e = np.linspace(-5.0, 0.0, 801)[:-1]
    e_grid = 10**log_e
    F = np.array([dnde(e, es) / density_of_states(e) for e in e_grid])
    logF = np.log(F)

    def F_of(e):
        return np.exp(np.interp(np.log10(e), log_e, logF))

    def rho(r):
        lo = max(1.0 - psi(r), 1e-5)
        # E - Phi(r) = psi(r) - (1 - e): from 0 at e = 1 - psi(r)
        return 4 * np.pi * quad(lambda e: F_of(e) * np.sqrt(max(2 * (psi(r) - 1 + e), 0.0)),
                                lo, e_grid[-1], epsabs=0.0, epsrel=1e-8, limit=400)[0]

    r_nodes = np.logspace(-5, 3, 641)
    rho_nodes = np.array([rho(r) for r in r_nodes])
    lrho = np.log(np.maximum(rho_nodes, 1e-300))

    def rho_i(r):
        return np.exp(np.interp(np.log(r), np.log(r_nodes), lrho))

    def n3(r):
        return quad(lambda x: 4 * np.pi * x * x * rho_i(x), 1e-5, r, epsabs=0.0, epsrel=1e-9,
                    limit=400, points=[q for q in (1e-3, 1e-2, 1e-1, 1.0) if q < r])[0]

    total = n3(r_nodes[-1])
    r3 = brentq(lambda r: n3(r) / total - 0.5, 1e-4, 9e2, xtol=1e-12)

    def n2(R):
        # count inside the cylinder of radius R: all inside the sphere R, plus the shells
        # beyond R weighted by the fraction of each shell inside the cylinder
        outer = quad(lambda x: 4 * np.pi * x * x * rho_i(x) * (1 - np.sqrt(1 - (R / x) ** 2)),
                     R, r_nodes[-1], epsabs=0.0, epsrel=1e-9, limit=400)[0]
        return n3(R) + outer

    r2 = brentq(lambda R: n2(R) / total - 0.5, 1e-4, 9e2, xtol=1e-12)
    return r3 / X_MAX, r2 / X_MAX


def main():
    fractions = [
        {"log10_es": les, "mmx_ratio": m, "bound_fraction": bound_fraction(10**les, m)}
        for les in LOG10_ES_FRACTION
        for m in MMX_RATIO
    ]
    radii = []
    for les in LOG10_ES_RADIUS:
        r3, r2 = half_light_radii(10**les)
        # the projection's quadrature fails for the most compact tracer (it returns the 3D
        # radius); its projected radius is left out
        radii.append({"log10_es": les, "r_half_3d_over_rmax": r3,
                      "r_half_2d_over_rmax": r2 if les >= -1.6 else None})
        print(les, r3, r2)
    out = {
        "provenance": {
            "script": "tests/reference/scripts/make_stellar_stripping_fixtures.py",
            "libraries": {"scipy": scipy.__version__, "numpy": np.__version__},
            "date": datetime.date.today().isoformat(),
            "notes": "Errani et al. 2022 eqs. 9, 10, 13 (alpha = beta = 3); bound_fraction is "
                     "int f dN/de / int dN/de over 0 < e < 1 (scipy.integrate.quad); radii of "
                     "the isotropic tracer in an NFW potential from its distribution function, "
                     "in units of r_max = X_MAX r_s",
            "x_max": X_MAX,
        },
        "bound_fraction": fractions,
        "half_light_radius": radii,
    }
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
