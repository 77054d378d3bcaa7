"""Reference values for the evolved subhalo mass function check against the universal model of
Jiang & van den Bosch 2016 (MNRAS 458, 2848; arXiv:1403.6827), used by
tests/validation/val_subhaloes.rs.

The universal model ties the mass fraction in subhaloes to the host's dynamical age
  N_tau = integral from t(z_0.5) to t_0 of dt / tau_dyn(t),
  tau_dyn(z) = pi / sqrt(2 Delta_vir(z)) / H(z)   (free-fall time of a halo of mean density
                                                     Delta_vir rho_crit; Bryan & Norman 1998),
where z_0.5 is the redshift at which the host's main branch first held half its mass today;
  f_sub = 0.3563 N_tau^-0.6 - 0.075               (mass fraction in subhaloes with m/M0 > 1e-4)
and the evolved mass function of all orders inside R_vir (bound mass m, psi = m / M0):
  dN / dln psi = 0.31 f_sub psi^-0.82 exp(-50 psi^4).
Coefficients: as in the fitting program the authors released with the first arXiv version of
the paper (version 1.0, 18 March 2014); the published paper's text could not be read here, so
the published values are not verified.

The cosmology is the tool's `planck18` preset: flat, h = 0.6766, Omega_m = 0.3111, photons at
T_cmb = 2.7255 K and N_eff = 3.046 massless neutrinos (astropy FlatLambdaCDM).

Run from the repo root with the pinned versions of tests/reference/requirements.txt:
  python tests/reference/scripts/make_jvdb16_fixtures.py
writes tests/reference/jvdb16.json.
"""

import datetime
import json
import math

import astropy
import astropy.units as u
import numpy as np
import scipy
from astropy.cosmology import FlatLambdaCDM
from scipy import integrate, optimize

COSMO = FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046, m_nu=0.0 * u.eV)
PSI = [1e-5, 3e-5, 1e-4, 3e-4, 1e-3]


def delta_vir(z):
    x = COSMO.Om(z) - 1.0
    return 18.0 * math.pi ** 2 + 82.0 * x - 39.0 * x * x


def z_at_age(t):
    return optimize.brentq(lambda z: COSMO.age(z).to_value(u.Gyr) - t, 0.0, 50.0, xtol=1e-13)


def tau_dyn(t):
    z = z_at_age(t)
    h = COSMO.H(z).to_value(1 / u.Gyr)
    return math.pi / math.sqrt(2.0 * delta_vir(z)) / h


def n_tau(z_half):
    t0 = COSMO.age(0.0).to_value(u.Gyr)
    th = COSMO.age(z_half).to_value(u.Gyr)
    return integrate.quad(lambda t: 1.0 / tau_dyn(t), th, t0, epsabs=0, epsrel=1e-10)[0]


def f_sub(n):
    return 0.3563 * n ** -0.6 - 0.075


def n_greater(psi, fs):
    """N(> psi) = integral over ln x from ln psi of 0.31 f_sub x^-0.82 exp(-50 x^4)."""
    f = lambda lx: 0.31 * fs * math.exp(-0.82 * lx) * math.exp(-50.0 * math.exp(4.0 * lx))
    return integrate.quad(f, math.log(psi), math.log(10.0), epsabs=0, epsrel=1e-11, limit=200)[0]


def main():
    z_half = [0.5, 0.8, 1.1, 1.5, 2.0]
    rows = []
    for zh in z_half:
        n = n_tau(zh)
        fs = f_sub(n)
        rows.append({
            "z_half": zh,
            "n_tau": n,
            "f_sub": fs,
            "n_greater": [n_greater(p, fs) for p in PSI],
        })
    out = {
        "source": "Jiang & van den Bosch 2016 (MNRAS 458, 2848) universal model: N_tau, "
                  "f_sub(N_tau), evolved SHMF of all orders; coefficients as in the authors' "
                  "fitting program v1.0 (2014) released with arXiv:1403.6827 (published text "
                  "not read)",
        "generated": datetime.date.today().isoformat(),
        "versions": {"astropy": astropy.__version__, "scipy": scipy.__version__,
                     "numpy": np.__version__},
        "cosmology": "FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046, m_nu=0)",
        "psi": PSI,
        "hosts": rows,
    }
    with open("tests/reference/jvdb16.json", "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
