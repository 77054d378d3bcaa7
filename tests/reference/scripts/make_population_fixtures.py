"""Reference values for the satellite-population checks (tests/validation/val_subhaloes.rs):
the evolved subhalo mass function of Springel et al. 2008 (MNRAS 391, 1685), rescaled from
the r50 sphere of their halo A-1 to the virial radius of a Milky-Way-mass host of
this tool's default (M_vir = 1.2e12 Msun, Bryan & Norman 1998 definition, Planck 2018, z = 0).

Inputs (recalled from the paper, not re-read here: marked memory in the output):
  * fit within r50: dN/dM = a0 (M/m0)^n, a0 = 3.26e-5 / Msun, m0 = 2.52e7 Msun, n = -1.9;
  * halo A-1: M50 = 2.523e12 Msun, r50 = 433.5 kpc, M200 = 1.839e12 Msun, r200 = 245.9 kpc;
  * Einasto fit to the subhalo number-density profile: alpha = 0.678, r_-2 = 0.81 r200.

Rescaling (self-similar): the number of subhaloes above a fixed m/M50 inside r50 is the same
for every host; the number inside R_vir follows from the Einasto profile in units of r200.
For the target host (NFW, c_vir = 10, a typical value of this tool's hosts: their Zhao et al.
2009 concentrations at z = 0 are 8-12) r50, M50 and r200 follow from its NFW profile. So
  N(> psi M_vir, < R_vir) = F * [a0 m0 / (-n - 1)] * (psi M_vir (M50_A / M50) / m0)^(n + 1),
  F = N_Ein(< R_vir / r200) / N_Ein(< r50 / r200).

Run from the repo root: python tests/reference/scripts/make_population_fixtures.py
(scipy and numpy as pinned in tests/reference/requirements.txt); writes
tests/reference/population.json.
"""

import datetime
import json
import math

import numpy as np
import scipy
from scipy import integrate, optimize

G = 4.300917e-6  # kpc (km/s)^2 / Msun (colossus constant)
H = 0.6766
OM = 0.3111
RHO_CRIT = 277.536627 * H * H  # Msun / kpc^3, z = 0


def delta_vir(om_z):
    """Bryan & Norman 1998, flat: Delta wrt critical."""
    x = om_z - 1.0
    return 18.0 * math.pi ** 2 + 82.0 * x - 39.0 * x * x


def mu(x):
    return math.log1p(x) - x / (1.0 + x)


def nfw_radius_at_mean_density(m_vir, r_vir, c, delta):
    """Radius where the mean density of the NFW (M_vir, R_vir, c) equals delta rho_crit."""
    r_s = r_vir / c
    m_s = m_vir / mu(c)

    def f(lr):
        r = math.exp(lr)
        return m_s * mu(r / r_s) / (4.0 / 3.0 * math.pi * r ** 3) - delta * RHO_CRIT

    lr = optimize.brentq(f, math.log(r_vir / 10), math.log(r_vir * 10), xtol=1e-14)
    r = math.exp(lr)
    return r, m_s * mu(r / r_s)


def einasto_count(x_max, alpha, x_m2):
    """Integral of n(r) r^2 dr from 0 to x_max (radii in units of r200)."""
    f = lambda x: math.exp(-(2.0 / alpha) * ((x / x_m2) ** alpha - 1.0)) * x * x
    return integrate.quad(f, 0.0, x_max, epsabs=0, epsrel=1e-12)[0]


def main():
    a0, m0, n = 3.26e-5, 2.52e7, -1.9
    m50_a = 2.523e12
    alpha, x_m2 = 0.678, 0.81
    m_vir = 1.2e12
    c_vir = 10.0
    dv = delta_vir(OM)
    r_vir = (3.0 * m_vir / (4.0 * math.pi * dv * RHO_CRIT)) ** (1.0 / 3.0)
    r50, m50 = nfw_radius_at_mean_density(m_vir, r_vir, c_vir, 50.0)
    r200, m200 = nfw_radius_at_mean_density(m_vir, r_vir, c_vir, 200.0)
    frac = einasto_count(r_vir / r200, alpha, x_m2) / einasto_count(r50 / r200, alpha, x_m2)
    psi = [1e-5, 3e-5, 1e-4, 3e-4, 1e-3]
    n_gt = [
        frac * a0 * m0 / (-n - 1.0) * (p * m_vir * (m50_a / m50) / m0) ** (n + 1.0)
        for p in psi
    ]
    out = {
        "provenance": {
            "script": "tests/reference/scripts/make_population_fixtures.py",
            "libraries": {"scipy": scipy.__version__, "numpy": np.__version__},
            "date": datetime.date.today().isoformat(),
            "notes": (
                "Springel et al. 2008 (MNRAS 391, 1685) evolved subhalo mass function "
                "dN/dM = a0 (M/m0)^n inside r50 of halo A-1 (a0 = 3.26e-5/Msun, m0 = 2.52e7 Msun, "
                "n = -1.9; M50 = 2.523e12 Msun) and the Einasto subhalo number-density profile "
                "(alpha = 0.678, r_-2 = 0.81 r200): values recalled from the paper (memory), "
                "rescaled self-similarly to the virial radius of an NFW host with M_vir = "
                "1.2e12 Msun, c_vir = 10, Planck 2018 (h = 0.6766, Om0 = 0.3111), z = 0, Bryan & "
                "Norman Delta_vir (critical)."
            ),
        },
        "host": {
            "m_vir_msun": m_vir,
            "c_vir": c_vir,
            "delta_vir_crit": dv,
            "r_vir_kpc": r_vir,
            "r50_kpc": r50,
            "m50_msun": m50,
            "r200_kpc": r200,
            "m200_msun": m200,
            "einasto_fraction_inside_r_vir": frac,
        },
        "springel08_rescaled": {
            "psi_over_m_vir": psi,
            "n_greater_inside_r_vir": n_gt,
        },
    }
    with open("tests/reference/population.json", "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(json.dumps(out["host"], indent=1))
    print(list(zip(psi, n_gt)))


if __name__ == "__main__":
    main()
