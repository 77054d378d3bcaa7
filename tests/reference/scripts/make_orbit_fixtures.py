#!/usr/bin/env python3
"""Generate tests/reference/orbits.json (host potentials, Jeans dispersions, test orbits) with galpy.

Run from the repository root:

    python tests/reference/scripts/make_orbit_fixtures.py

Library versions (pinned in tests/reference/requirements.txt; python 3.12):
    galpy 1.12.1, astropy 8.0.2, scipy 1.18.1, numpy 2.5.5   (colossus is not used)

Units.  Everything stored is physical: kpc, km/s, Gyr, Msun, (km/s)^2 for potentials and energies,
Msun/kpc^3 for densities.  galpy works internally in natural units; every galpy object here gets
ro = 8 kpc, vo = 220 km/s (as astropy Quantities), every input is an astropy Quantity and every
output is requested with quantity=True and converted with astropy (.to(...)).  galpy's mass unit is
    conversion.mass_in_msol(220, 8)   [= vo^2 ro / G with astropy's CODATA G and IAU Msun]
so the G galpy implies is G = vo^2 ro / mass_in_msol (stored as galpy_G_kpc_kms2_msun =
4.30091727003628e-6; it differs from 4.300917270038e-6 by -4.0e-13 relative and from the crate's
G_KPC_KMS2_PER_MSUN = 4.300917270e-6 by 8.4e-12, so no mass rescaling is needed).  galpy's time unit is conversion.time_in_Gyr(220, 8)
(Julian year, astropy's km/s -> pc/Myr).

Potentials (all axisymmetric, centred on the origin, z = symmetry axis):
    halo  = NFWPotential(amp=M_scale*u.Msun, a=r_s*u.kpc, ro=8*u.kpc, vo=220*u.km/u.s)
            M_vir = 1.2e12 Msun, c_vir = 10, R_vir = 300 kpc -> r_s = 30 kpc,
            M_scale = 4 pi rho_s r_s^3 = M_vir / (ln(1+c) - c/(1+c))   (galpy amp = M_scale)
            rho = M_scale / (4 pi r_s^3) / (x (1+x)^2), Phi = -G M_scale ln(1+x) / r, x = r/r_s
    disc  = MiyamotoNagaiPotential(amp=6.8e10*u.Msun, a=3.0*u.kpc, b=0.28*u.kpc, ro=..., vo=...)
            (galpy amp = total mass)  Phi = -G M_d / sqrt(R^2 + (a + sqrt(z^2+b^2))^2)
    bulge = HernquistPotential(amp=2*1.0e10*u.Msun, a=0.6*u.kpc, ro=..., vo=...)
            (galpy amp = TWICE the total mass)  Phi = -G M_b / (r + a), M(<r) = M_b r^2/(r+a)^2
    "nfw" = halo;  "nfw_disc_bulge" = halo + disc + bulge  (galpy CompositePotential via '+').
Each convention is verified (components.*.checks): galpy amp * mass_in_msol, galpy
evaluateDensities / .mass() / evaluatePotentials against the closed forms with galpy's G.

Calls per potential:
    galpy.potential.vcirc(pot, R*u.kpc, quantity=True)                  R in R_PLANE, z = 0
    galpy.potential.evaluatePotentials(pot, R*u.kpc, z*u.kpc, quantity=True)
    galpy.potential.evaluateRforces / evaluatezforces(pot, R*u.kpc, z*u.kpc, quantity=True)
        (galpy returns km/s/Myr; stored converted with astropy to (km/s)^2/kpc and to km/s/Gyr;
        F_R = -dPhi/dR, F_z = -dPhi/dz: accelerations, negative = towards the axis / the plane)
    at (R, z) = R_PLANE x {0} and RZ_OFF.
Jeans (isotropic, beta = 0), r in R_JEANS:
    nfw:   galpy.df.jeans.sigmar(nfw, r*u.kpc, beta=0.0, quantity=True) (galpy: scipy quad of
           -rho F_r from r to inf / rho(r), forces/densities at R = z = r/sqrt(2)) = sigma_r_kms;
           sigma_r_kms_scipy: the same integral sigma^2 = (1/rho) int_r^inf rho G M(<r')/r'^2 dr'
           with the closed-form NFW rho and M (scipy quad, epsrel 1e-12, ln r panels).
    nfw_disc_bulge: tracer density rho = NFW halo only; M(<r) = M_halo(<r) + M_bulge(<r)
           + M_disc(<r), the disc mass inside the SPHERE of radius r from the scipy integral of the
           Miyamoto-Nagai density:  M_disc(<r) = 4 pi int_0^r s^2 rhobar(s) ds,
           rhobar(s) = (1/s) int_0^s rho_MN(sqrt(s^2 - z^2), z) dz  (sphere average, nested quad).
           The disc part of the r' integral is done after exchanging the order of integration,
               int_r^inf rho_h M_d(<r')/r'^2 dr' = M_d(<r) K(r) + int_r^inf 4 pi s^2 rhobar(s) K(s) ds,
               K(s) = int_s^inf rho_h(t)/t^2 dt   (closed form / series),
           so that no triple integral is needed.  Cross-checks: sigma_r_kms_gauss (direct r'
           integral, M_disc(<r') from Gauss' theorem with the analytic MN radial force, 1D quad
           over the sphere), m_disc_msun_galpy = galpy MiyamotoNagaiPotential.mass(r) (Gauss'
           theorem with galpy's default quad), and sigma_r_kms_galpy_sigmar_45deg =
           jeans.sigmar(pot, r, dens=<NFW density>) which uses the composite force along
           R = z = r/sqrt(2) (NOT the spherical average; for information only).
           sigma_r_kms_disc_hernquist_approx: same Jeans integral with the disc mass in spheres
           replaced by M_d r^2/(r+a+b)^2 (an approximation, for information only).
Orbits (5 initial conditions, Cartesian; galpy Orbit([R, vR, vT, z, vz, phi]) with Quantities,
    R = hypot(x, y), phi = atan2(y, x), vR = (x vx + y vy)/R, vT = (x vy - y vx)/R):
    o.integrate(ts, pot, method='dop853_c', rtol=1e-14, atol=1e-14) with ts = T_OUT*u.Gyr
    (dop853_c accepts non-equispaced ts), outputs o.x/y/z/vx/vy/vz(ts, quantity=True),
    o.E(ts, pot=pot, quantity=True).  ALWAYS evaluated at the full integration time array: galpy
    interpolates with splines when asked for any other set of times.
    Fine run: ts = linspace(0, 10, N_FINE) Gyr, same integrator: energy drift, galpy
    o.rperi(analytic=False) / o.rap(analytic=False) (min/max over the samples), and refined
    rperi/rap: the 3 smallest (largest) sampled local minima (maxima) of r(t) are re-integrated from
    the neighbouring sample and scipy.optimize.minimize_scalar(method='bounded') finds the extremum;
    the end points t = 0 and 10 Gyr are candidates too (the short re-integrations start from the
    stored natural-unit state o.getOrbit()[i-1], same integrator and tolerances).
    Self-checks at T_OUT: rtol=atol=1e-13 vs 1e-14 (different adaptive step sequence); dense
    output of the fine run vs the outputs-only run (galpy's dop853_c steps independently of the
    output times and interpolates with the DOP853 dense output); fixed-step rk6_c with
    dt = 1e-4 and 5e-5 Gyr (ts = 0..10 Gyr step 1 Gyr) vs dop853_c.
"""

import datetime
import json
import math
import os
import sys
import warnings

import numpy as np
import scipy
import scipy.integrate
import scipy.optimize

import astropy
import astropy.units as u

import galpy
from galpy.df import jeans
from galpy.orbit import Orbit
from galpy.potential import (HernquistPotential, MiyamotoNagaiPotential, NFWPotential,
                             evaluateDensities, evaluatePotentials, evaluateRforces,
                             evaluatezforces, vcirc)
from galpy.util import conversion

HERE = os.path.dirname(os.path.abspath(__file__))
OUT_DIR = os.path.dirname(HERE)  # tests/reference
SCRIPT = "tests/reference/scripts/make_orbit_fixtures.py"

RO_KPC = 8.0
VO_KMS = 220.0
RO = RO_KPC * u.kpc
VO = VO_KMS * u.km / u.s
KMS = u.km / u.s
KMS2 = u.km ** 2 / u.s ** 2
KMS2_PER_KPC = u.km ** 2 / u.s ** 2 / u.kpc
KMS_PER_GYR = u.km / u.s / u.Gyr
MSUN_KPC3 = u.Msun / u.kpc ** 3

G_RUST = 4.300917270038e-6  # kpc (km/s)^2 / Msun, as requested for the comparison

# Halo
M_VIR = 1.2e12
C_VIR = 10.0
R_VIR = 300.0
R_S = R_VIR / C_VIR
# Disc and bulge
M_DISC = 6.8e10
A_DISC = 3.0
B_DISC = 0.28
M_BULGE = 1.0e10
A_BULGE = 0.6

R_PLANE = [0.5, 1.0, 2.0, 5.0, 8.0, 12.0, 20.0, 50.0, 100.0, 200.0, 300.0]
RZ_OFF = [(5.0, 1.0), (8.0, 3.0), (20.0, 10.0), (50.0, 50.0)]
R_JEANS = [1.0, 5.0, 10.0, 30.0, 50.0, 100.0, 200.0, 300.0]
R_CHECK = [0.1, 0.6, 1.0, 3.0, 10.0, 30.0, 100.0, 300.0, 1000.0]

T_OUT = [0.0, 1.0, 2.0, 4.0, 8.0, 10.0]  # Gyr
N_FINE = 100001  # 0..10 Gyr, dt = 1e-4 Gyr
RTOL = 1e-14
RTOL_CHECK = 1e-13
RK6_DTS = [1e-4, 5e-5]  # Gyr
SELF_CHECK_TOL = 1e-8

# name -> (position kpc, velocity km/s); None = (0, vc(8 kpc), 0) from the potential itself
ORBITS = [
    ("circular_8", (8.0, 0.0, 0.0), None),
    ("eccentric", (100.0, 0.0, 0.0), (0.0, 60.0, 0.0)),
    ("inclined", (50.0, 0.0, 20.0), (10.0, 120.0, 60.0)),
    ("radial_infall", (300.0, 0.0, 0.0), (-100.0, 20.0, 0.0)),
    ("polar", (30.0, 0.0, 0.0), (0.0, 0.0, 150.0)),
]

LIBRARIES = {"galpy": galpy.__version__, "astropy": astropy.__version__,
             "scipy": scipy.__version__, "numpy": np.__version__}
TODAY = datetime.date.today().isoformat()

MASS_IN_MSOL = conversion.mass_in_msol(VO_KMS, RO_KPC)
TIME_IN_GYR = conversion.time_in_Gyr(VO_KMS, RO_KPC)
G_GALPY = VO_KMS ** 2 * RO_KPC / MASS_IN_MSOL  # kpc (km/s)^2 / Msun
G = G_GALPY  # used in every closed-form check and in the scipy Jeans integrals


def provenance(notes):
    return {"script": SCRIPT, "libraries": dict(LIBRARIES), "generated": TODAY, "notes": notes}


def fl(x):
    """numpy scalar/array -> plain python float / list of floats (None for nan)."""
    if x is None:
        return None
    if isinstance(x, np.ndarray) and x.ndim == 0:
        x = x[()]
    if isinstance(x, (list, tuple, np.ndarray)):
        return [fl(v) for v in x]
    v = float(x)
    return None if math.isnan(v) else v


def relmax(a, b):
    a = np.asarray(a, float)
    b = np.asarray(b, float)
    return float(np.max(np.abs(a / b - 1.0)))


# -------------------------------------------------------------------------------------------------
# Closed forms (physical units, G = galpy's G)
# -------------------------------------------------------------------------------------------------

def nfw_mu(x):
    """mu(x) = ln(1+x) - x/(1+x), without cancellation at small x (series below x = 0.1)."""
    if x < 0.1:
        return math.fsum((-1) ** n * (n - 1) / n * x ** n for n in range(2, 42))
    return math.log1p(x) - x / (1.0 + x)


M_SCALE = M_VIR / nfw_mu(C_VIR)
RHO_S = M_SCALE / (4.0 * math.pi * R_S ** 3)


def nfw_rho(r):
    x = r / R_S
    return RHO_S / (x * (1.0 + x) ** 2)


def nfw_mass(r):
    return M_SCALE * nfw_mu(r / R_S)


def nfw_phi(r):
    return -G * M_SCALE * math.log1p(r / R_S) / r


def nfw_k(x):
    """k(x) = int_x^inf du / (u^3 (1+u)^2), so that K(s) = int_s^inf rho_h/t^2 dt = rho_s/r_s k(s/r_s)."""
    if x > 4.0:
        # sum_{n>=0} (-1)^n (n+1) x^-(4+n) / (4+n); ratio <= 1/4 -> 40 terms < 1e-22 relative
        return math.fsum((-1) ** n * (n + 1) * x ** -(4 + n) / (4 + n) for n in range(40))
    return 0.5 / x ** 2 - 2.0 / x + 3.0 * math.log1p(1.0 / x) - 1.0 / (1.0 + x)


def nfw_K(s):
    return RHO_S / R_S * nfw_k(s / R_S)


def hern_rho(r):
    return M_BULGE * A_BULGE / (2.0 * math.pi * r * (r + A_BULGE) ** 3)


def hern_mass(r):
    return M_BULGE * r * r / (r + A_BULGE) ** 2


def hern_phi(r):
    return -G * M_BULGE / (r + A_BULGE)


def mn_rho(R, z):
    zb = math.sqrt(z * z + B_DISC ** 2)
    azb = A_DISC + zb
    return (B_DISC ** 2 * M_DISC / (4.0 * math.pi) * (A_DISC * R * R + (A_DISC + 3.0 * zb) * azb ** 2)
            / ((R * R + azb ** 2) ** 2.5 * zb ** 3))


def mn_phi(R, z):
    return -G * M_DISC / math.sqrt(R * R + (A_DISC + math.sqrt(z * z + B_DISC ** 2)) ** 2)


def quad(f, a, b, points=None, epsrel=1e-12):
    """scipy quad with a relative tolerance only; collects warnings."""
    pts = None
    if points is not None:
        pts = [p for p in points if a < p < b] or None
    with warnings.catch_warnings():
        warnings.simplefilter("error", scipy.integrate.IntegrationWarning)
        val, _ = scipy.integrate.quad(f, a, b, points=pts, epsabs=0.0, epsrel=epsrel, limit=400)
    return val


def tail(f, r, width=0.5, decades=15.0):
    """int_r^inf f(s) ds, as a sum of quad panels of `width` in ln s (integrand f(s) s)."""
    lo = math.log(r)
    n = int(math.ceil(decades * math.log(10.0) / width))
    total = []
    for k in range(n):
        a = lo + k * width
        total.append(quad(lambda t: f(math.exp(t)) * math.exp(t), a, a + width))
    return math.fsum(total)


# quad break points (kpc) for integrals across the thin disc: b * 3^k
GEOM_POINTS = [B_DISC * 3.0 ** k for k in range(40)]


def mn_rhobar(s):
    """Average of the Miyamoto-Nagai density over the sphere of radius s."""
    return quad(lambda z: mn_rho(math.sqrt(max(s * s - z * z, 0.0)), z), 0.0, s,
                points=GEOM_POINTS) / s


def mn_mass_sphere_density(r):
    """M_disc(<r) = 4 pi int_0^r s^2 rhobar(s) ds (scipy nested quad of the MN density)."""
    pts = [B_DISC, 3.0 * B_DISC, A_DISC, 3.0 * A_DISC, 10.0 * A_DISC]
    return 4.0 * math.pi * quad(lambda s: s * s * mn_rhobar(s), 0.0, r, points=pts)


def mn_mass_sphere_gauss(r):
    """M_disc(<r) from Gauss' theorem: r^2/G * <dPhi/dr> over the sphere, analytic MN force."""

    def dphidr_over_gm(mu):
        z = r * mu
        R = r * math.sqrt(max(1.0 - mu * mu, 0.0))
        zb = math.sqrt(z * z + B_DISC ** 2)
        D2 = R * R + (A_DISC + zb) ** 2
        return (R * R + z * z * (A_DISC + zb) / zb) / (r * D2 ** 1.5)

    pts = [p / r for p in GEOM_POINTS + [A_DISC]]
    return M_DISC * r * r * quad(dphidr_over_gm, 0.0, 1.0, points=pts)


# -------------------------------------------------------------------------------------------------
# galpy potentials
# -------------------------------------------------------------------------------------------------

def build_components():
    halo = NFWPotential(amp=M_SCALE * u.Msun, a=R_S * u.kpc, ro=RO, vo=VO)
    disc = MiyamotoNagaiPotential(amp=M_DISC * u.Msun, a=A_DISC * u.kpc, b=B_DISC * u.kpc,
                                  ro=RO, vo=VO)
    bulge = HernquistPotential(amp=2.0 * M_BULGE * u.Msun, a=A_BULGE * u.kpc, ro=RO, vo=VO)
    return {"halo": halo, "disc": disc, "bulge": bulge}


def g_dens(pot, R, z):
    return evaluateDensities(pot, R * u.kpc, z * u.kpc, quantity=True).to_value(MSUN_KPC3)


def g_phi(pot, R, z):
    return evaluatePotentials(pot, R * u.kpc, z * u.kpc, quantity=True).to_value(KMS2)


def g_mass(pot, r):
    return pot.mass(r * u.kpc, quantity=True).to_value(u.Msun)


def component_checks(comps):
    halo, disc, bulge = comps["halo"], comps["disc"], comps["bulge"]
    out = {}

    r = R_CHECK
    rho_g = [g_dens(halo, rr, 0.0) for rr in r]
    m_g = [g_mass(halo, rr) for rr in r]
    phi_g = [g_phi(halo, rr, 0.0) for rr in r]
    rho_f = [nfw_rho(rr) for rr in r]
    m_f = [nfw_mass(rr) for rr in r]
    phi_f = [nfw_phi(rr) for rr in r]
    out["halo"] = {
        "galpy_class": "NFWPotential",
        "galpy_call": "NFWPotential(amp=m_scale_msun*u.Msun, a=r_s_kpc*u.kpc, ro=8*u.kpc, "
                      "vo=220*u.km/u.s)",
        "m_vir_msun": M_VIR, "c_vir": C_VIR, "r_vir_kpc": R_VIR, "r_s_kpc": R_S,
        "m_scale_msun": M_SCALE, "rho_s_msun_kpc3": RHO_S,
        "galpy_amp_msun": M_SCALE,
        "galpy_amp_natural": float(halo._amp),
        "galpy_amp_natural_times_mass_in_msol": float(halo._amp * MASS_IN_MSOL),
        "galpy_a_natural": float(halo.a),
        "amp_convention": "amp = M_scale = 4 pi rho_s r_s^3 = M_vir/(ln(1+c) - c/(1+c)); "
                          "rho = amp/(4 pi a^3) / ((r/a)(1+r/a)^2); M(<r) = amp mu(r/a); "
                          "Phi = -G amp ln(1+r/a)/r",
        "checks": {
            "r_kpc": R_CHECK,
            "density_galpy_msun_kpc3": fl(rho_g), "density_formula_msun_kpc3": fl(rho_f),
            "mass_enclosed_galpy_msun": fl(m_g), "mass_enclosed_formula_msun": fl(m_f),
            "phi_galpy_kms2": fl(phi_g), "phi_formula_kms2": fl(phi_f),
            "mass_at_r_vir_galpy_msun": g_mass(halo, R_VIR),
            "density_at_r_s_galpy_over_rho_s": g_dens(halo, R_S, 0.0) / RHO_S,
            "max_rel_diff_density": relmax(rho_g, rho_f),
            "max_rel_diff_mass": relmax(m_g, m_f),
            "max_rel_diff_phi": relmax(phi_g, phi_f),
        },
    }

    rho_g = [g_dens(bulge, rr, 0.0) for rr in r]
    m_g = [g_mass(bulge, rr) for rr in r]
    phi_g = [g_phi(bulge, rr, 0.0) for rr in r]
    rho_f = [hern_rho(rr) for rr in r]
    m_f = [hern_mass(rr) for rr in r]
    phi_f = [hern_phi(rr) for rr in r]
    out["bulge"] = {
        "galpy_class": "HernquistPotential",
        "galpy_call": "HernquistPotential(amp=2*m_b_msun*u.Msun, a=a_kpc*u.kpc, ro=8*u.kpc, "
                      "vo=220*u.km/u.s)",
        "m_b_msun": M_BULGE, "a_kpc": A_BULGE,
        "galpy_amp_msun": 2.0 * M_BULGE,
        "galpy_amp_natural": float(bulge._amp),
        "galpy_amp_natural_times_mass_in_msol": float(bulge._amp * MASS_IN_MSOL),
        "amp_convention": "amp = 2 M_b (galpy: 'amp is 2 x [total mass]'); rho = amp/(4 pi a^3) "
                          "/ ((r/a)(1+r/a)^3) = M_b a/(2 pi r (r+a)^3); M(<r) = M_b r^2/(r+a)^2; "
                          "Phi = -G M_b/(r+a)",
        "checks": {
            "r_kpc": R_CHECK,
            "density_galpy_msun_kpc3": fl(rho_g), "density_formula_msun_kpc3": fl(rho_f),
            "mass_enclosed_galpy_msun": fl(m_g), "mass_enclosed_formula_msun": fl(m_f),
            "phi_galpy_kms2": fl(phi_g), "phi_formula_kms2": fl(phi_f),
            "mass_total_galpy_msun": bulge.mass(np.inf * u.kpc, quantity=True).to_value(u.Msun),
            "max_rel_diff_density": relmax(rho_g, rho_f),
            "max_rel_diff_mass": relmax(m_g, m_f),
            "max_rel_diff_phi": relmax(phi_g, phi_f),
        },
    }

    pts = [(R, 0.0) for R in R_PLANE] + list(RZ_OFF) + [(0.0, 0.1), (0.0, 5.0), (3.0, 0.28)]
    Rs = [p[0] for p in pts]
    zs = [p[1] for p in pts]
    rho_g = [g_dens(disc, R, z) for R, z in pts]
    phi_g = [g_phi(disc, R, z) for R, z in pts]
    rho_f = [mn_rho(R, z) for R, z in pts]
    phi_f = [mn_phi(R, z) for R, z in pts]
    m_dens = [mn_mass_sphere_density(rr) for rr in R_CHECK]
    m_gauss = [mn_mass_sphere_gauss(rr) for rr in R_CHECK]
    m_galpy = [g_mass(disc, rr) for rr in R_CHECK]
    out["disc"] = {
        "galpy_class": "MiyamotoNagaiPotential",
        "galpy_call": "MiyamotoNagaiPotential(amp=m_d_msun*u.Msun, a=a_kpc*u.kpc, b=b_kpc*u.kpc, "
                      "ro=8*u.kpc, vo=220*u.km/u.s)",
        "m_d_msun": M_DISC, "a_kpc": A_DISC, "b_kpc": B_DISC,
        "galpy_amp_msun": M_DISC,
        "galpy_amp_natural": float(disc._amp),
        "galpy_amp_natural_times_mass_in_msol": float(disc._amp * MASS_IN_MSOL),
        "amp_convention": "amp = M_d (total mass); Phi = -G M_d / sqrt(R^2 + (a + sqrt(z^2+b^2))^2); "
                          "rho = b^2 M_d/(4 pi) [a R^2 + (a + 3 zb)(a + zb)^2] / "
                          "([R^2 + (a+zb)^2]^(5/2) zb^3), zb = sqrt(z^2+b^2)",
        "checks": {
            "R_kpc": Rs, "z_kpc": zs,
            "density_galpy_msun_kpc3": fl(rho_g), "density_formula_msun_kpc3": fl(rho_f),
            "phi_galpy_kms2": fl(phi_g), "phi_formula_kms2": fl(phi_f),
            "max_rel_diff_density": relmax(rho_g, rho_f),
            "max_rel_diff_phi": relmax(phi_g, phi_f),
            "sphere_r_kpc": R_CHECK,
            "mass_in_sphere_density_integral_msun": fl(m_dens),
            "mass_in_sphere_gauss_msun": fl(m_gauss),
            "mass_in_sphere_galpy_msun": fl(m_galpy),
            "max_rel_diff_mass_density_vs_gauss": relmax(m_dens, m_gauss),
            "max_rel_diff_mass_galpy_vs_gauss": relmax(m_galpy, m_gauss),
        },
    }
    return out


# -------------------------------------------------------------------------------------------------
# Potential / force tables
# -------------------------------------------------------------------------------------------------

def force_table(pot, Rs, zs):
    phi, fR, fz, fRg, fzg, fR_nat, fz_nat = [], [], [], [], [], [], []
    for R, z in zip(Rs, zs):
        phi.append(g_phi(pot, R, z))
        qR = evaluateRforces(pot, R * u.kpc, z * u.kpc, quantity=True)
        qz = evaluatezforces(pot, R * u.kpc, z * u.kpc, quantity=True)
        fR.append(qR.to_value(KMS2_PER_KPC))
        fz.append(qz.to_value(KMS2_PER_KPC))
        fRg.append(qR.to_value(KMS_PER_GYR))
        fzg.append(qz.to_value(KMS_PER_GYR))
        # natural-unit route, for the record: F_nat * vo^2/ro is (km/s)^2/kpc exactly
        fR_nat.append(evaluateRforces(pot, R / RO_KPC, z / RO_KPC, use_physical=False)
                      * VO_KMS ** 2 / RO_KPC)
        fz_nat.append(evaluatezforces(pot, R / RO_KPC, z / RO_KPC, use_physical=False)
                      * VO_KMS ** 2 / RO_KPC)
    diff = max(abs(a - b) / max(abs(b), 1e-300) for a, b in zip(fR + fz, fR_nat + fz_nat)
               if b != 0.0)
    return {
        "R_kpc": list(Rs), "z_kpc": list(zs),
        "phi_kms2": fl(phi),
        "force_R_kms2_per_kpc": fl(fR), "force_z_kms2_per_kpc": fl(fz),
        "force_R_kms_per_gyr": fl(fRg), "force_z_kms_per_gyr": fl(fzg),
    }, diff


def make_tables(pot):
    plane, d1 = force_table(pot, R_PLANE, [0.0] * len(R_PLANE))
    plane["vcirc_kms"] = fl([vcirc(pot, R * u.kpc, quantity=True).to_value(KMS) for R in R_PLANE])
    off, d2 = force_table(pot, [p[0] for p in RZ_OFF], [p[1] for p in RZ_OFF])
    return plane, off, max(d1, d2)


# -------------------------------------------------------------------------------------------------
# Jeans
# -------------------------------------------------------------------------------------------------

def sigma_nfw_scipy(r):
    val = tail(lambda s: nfw_rho(s) * G * nfw_mass(s) / (s * s), r)
    return math.sqrt(val / nfw_rho(r))


def make_jeans_nfw(halo):
    galpy_s = [jeans.sigmar(halo, r * u.kpc, beta=0.0, quantity=True).to_value(KMS) for r in R_JEANS]
    scipy_s = [sigma_nfw_scipy(r) for r in R_JEANS]
    return {
        "r_kpc": R_JEANS,
        "beta": 0.0,
        "sigma_r_kms": fl(galpy_s),
        "sigma_r_kms_scipy": fl(scipy_s),
        "max_rel_diff_galpy_vs_scipy": relmax(galpy_s, scipy_s),
        "rho_tracer_msun_kpc3": fl([nfw_rho(r) for r in R_JEANS]),
        "m_enclosed_msun": fl([nfw_mass(r) for r in R_JEANS]),
        "method": "sigma_r_kms = galpy.df.jeans.sigmar(nfw, r*u.kpc, beta=0.0, quantity=True) "
                  "(tracer density = the potential's density; scipy quad, default epsrel 1.49e-8, "
                  "epsabs=0); sigma_r_kms_scipy = sqrt((1/rho(r)) int_r^inf rho G M(<r')/r'^2 dr') "
                  "with closed-form NFW rho, M and galpy's G (quad epsrel 1e-12 on ln r panels)",
    }


def sigma_ndb(r, m_disc_r):
    """Halo tracer in halo + bulge + disc; disc mass in spheres from the density integral."""
    hb = tail(lambda s: nfw_rho(s) * (nfw_mass(s) + hern_mass(s)) / (s * s), r)
    disc = m_disc_r * nfw_K(r) + tail(lambda s: 4.0 * math.pi * s * s * mn_rhobar(s) * nfw_K(s), r)
    return math.sqrt(G * (hb + disc) / nfw_rho(r))


def sigma_ndb_gauss(r):
    val = tail(lambda s: nfw_rho(s) * (nfw_mass(s) + hern_mass(s) + mn_mass_sphere_gauss(s)) / (s * s), r)
    return math.sqrt(G * val / nfw_rho(r))


def disc_mass_hernquist_approx(r):
    """NOT exact: Hernquist-like M_d r^2/(r+a+b)^2 (the crate's HostSnapshot::disc_mass_spherical
    approximation when this fixture was written), for an informative second sigma_r column."""
    s = A_DISC + B_DISC
    return M_DISC * r * r / ((r + s) * (r + s))


def sigma_ndb_hernquist_approx(r):
    val = tail(lambda t: nfw_rho(t) * (nfw_mass(t) + hern_mass(t) + disc_mass_hernquist_approx(t))
               / (t * t), r)
    return math.sqrt(G * val / nfw_rho(r))


def make_jeans_ndb(comps, pot):
    halo, disc = comps["halo"], comps["disc"]
    m_disc = [mn_mass_sphere_density(r) for r in R_JEANS]
    m_disc_gauss = [mn_mass_sphere_gauss(r) for r in R_JEANS]
    m_disc_galpy = [g_mass(disc, r) for r in R_JEANS]
    s = [sigma_ndb(r, m) for r, m in zip(R_JEANS, m_disc)]
    s_gauss = [sigma_ndb_gauss(r) for r in R_JEANS]

    def dens_nat(rn):  # NFW density in galpy natural units, of natural r
        return evaluateDensities(halo, rn * 2 ** -0.5, rn * 2 ** -0.5, use_physical=False)

    s_45 = [jeans.sigmar(pot, r * u.kpc, dens=dens_nat, beta=0.0, quantity=True).to_value(KMS)
            for r in R_JEANS]
    # check the K(s) closed form/series against a direct quad of rho_h/t^2
    kdiff = max(abs(nfw_K(x * R_S) / tail(lambda t: nfw_rho(t) / (t * t), x * R_S) - 1.0)
                for x in [0.03, 0.3, 1.0, 3.9, 4.1, 10.0, 100.0])
    assert kdiff < 1e-12, kdiff
    return {
        "r_kpc": R_JEANS,
        "beta": 0.0,
        "sigma_r_kms": fl(s),
        "sigma_r_kms_gauss": fl(s_gauss),
        "sigma_r_kms_galpy_sigmar_45deg": fl(s_45),
        "max_rel_diff_density_vs_gauss": relmax(s, s_gauss),
        "rho_tracer_msun_kpc3": fl([nfw_rho(r) for r in R_JEANS]),
        "m_halo_msun": fl([nfw_mass(r) for r in R_JEANS]),
        "m_bulge_msun": fl([hern_mass(r) for r in R_JEANS]),
        "m_disc_msun": fl(m_disc),
        "m_disc_msun_gauss": fl(m_disc_gauss),
        "m_disc_msun_galpy": fl(m_disc_galpy),
        "m_enclosed_msun": fl([nfw_mass(r) + hern_mass(r) + m for r, m in zip(R_JEANS, m_disc)]),
        "m_disc_msun_hernquist_approx": fl([disc_mass_hernquist_approx(r) for r in R_JEANS]),
        "sigma_r_kms_disc_hernquist_approx": fl([sigma_ndb_hernquist_approx(r) for r in R_JEANS]),
        "method": "isotropic spherical Jeans, tracer rho = NFW halo density only, "
                  "sigma_r^2(r) = (1/rho(r)) int_r^inf rho(r') G M(<r')/r'^2 dr' with "
                  "M = m_halo + m_bulge + m_disc (all masses inside the sphere of radius r'); "
                  "m_disc = 4 pi int_0^r s^2 rhobar(s) ds, rhobar(s) = (1/s) int_0^s "
                  "rho_MN(sqrt(s^2-z^2), z) dz (scipy nested quad of the MN density); disc term "
                  "evaluated as m_disc(<r) K(r) + int_r^inf 4 pi s^2 rhobar(s) K(s) ds, K(s) = "
                  "int_s^inf rho(t)/t^2 dt (order of integration exchanged). sigma_r_kms_gauss: "
                  "direct r' integral with m_disc from Gauss' theorem (analytic MN force averaged "
                  "over the sphere). sigma_r_kms_galpy_sigmar_45deg = galpy jeans.sigmar(pot, r, "
                  "dens=NFW density, beta=0): galpy uses the composite force along R = z = "
                  "r/sqrt(2), not the spherical average - NOT the reference, informative only. "
                  "m_disc_msun_galpy = MiyamotoNagaiPotential.mass(r) (galpy: Gauss' theorem, "
                  "default quad tolerance). *_hernquist_approx (NOT a reference for the exact "
                  "model): the same Jeans integral with the disc mass in spheres replaced by the "
                  "Hernquist-like approximation M_d r^2/(r+a+b)^2; that approximation is 24% off "
                  "at r = 1-5 kpc and moves sigma_r by up to 6% (r = 5 kpc).",
    }


# -------------------------------------------------------------------------------------------------
# Orbits
# -------------------------------------------------------------------------------------------------

def galpy_ic(pos, vel):
    x, y, z = pos
    vx, vy, vz = vel
    R = math.hypot(x, y)
    phi = math.atan2(y, x)
    vR = (x * vx + y * vy) / R
    vT = (x * vy - y * vx) / R
    return R, vR, vT, z, vz, phi


def new_orbit(pos, vel):
    R, vR, vT, z, vz, phi = galpy_ic(pos, vel)
    return Orbit([R * u.kpc, vR * KMS, vT * KMS, z * u.kpc, vz * KMS, phi * u.rad], ro=RO, vo=VO)


def cart(o, ts):
    """Cartesian phase space at the FULL integration time array ts (no galpy interpolation)."""
    return np.array([
        o.x(ts, quantity=True).to_value(u.kpc), o.y(ts, quantity=True).to_value(u.kpc),
        o.z(ts, quantity=True).to_value(u.kpc), o.vx(ts, quantity=True).to_value(KMS),
        o.vy(ts, quantity=True).to_value(KMS), o.vz(ts, quantity=True).to_value(KMS)])


def integrate(pos, vel, pot, ts, method="dop853_c", **kw):
    o = new_orbit(pos, vel)
    o.integrate(ts, pot, method=method, progressbar=False, **kw)
    return o


def rel_pos_vel(a, b):
    """max over columns of |dx|/|x| and |dv|/|v| (Euclidean), b = reference."""
    dp = np.linalg.norm(a[:3] - b[:3], axis=0) / np.linalg.norm(b[:3], axis=0)
    dv = np.linalg.norm(a[3:] - b[3:], axis=0) / np.linalg.norm(b[3:], axis=0)
    return float(np.max(dp)), float(np.max(dv))


def refine_extremum(o_fine, pot, i, sign, dt_nat):
    """Extremum of r near sample i: integrate from sample i-1 over 2 dt, bounded Brent in tau."""
    vxvv = o_fine.getOrbit()[i - 1]  # natural units [R, vR, vT, z, vz, phi]
    t0 = o_fine.t[i - 1] * TIME_IN_GYR

    def r_of(tau):
        if tau <= 0.0:
            R, z = vxvv[0], vxvv[3]
            return sign * math.hypot(R, z)
        o = Orbit(list(vxvv), ro=RO_KPC, vo=VO_KMS)
        ts = np.array([0.0, tau])
        o.integrate(ts, pot, method="dop853_c", rtol=RTOL, atol=RTOL, progressbar=False)
        w = o.getOrbit()[-1]
        return sign * math.hypot(w[0], w[3])

    res = scipy.optimize.minimize_scalar(r_of, bounds=(0.0, 2.0 * dt_nat), method="bounded",
                                         options={"xatol": 1e-12 * dt_nat})
    return sign * res.fun * RO_KPC, t0 + res.x * TIME_IN_GYR


def peri_apo(o_fine, pot, r, dt_nat):
    n = len(r)
    out = {}
    for name, sign in (("peri", 1.0), ("apo", -1.0)):
        s = sign * r
        loc = [i for i in range(1, n - 1) if s[i] <= s[i - 1] and s[i] <= s[i + 1]]
        loc = sorted(loc, key=lambda i: s[i])[:3]
        cands = [(s[0], 0.0), (s[-1], float(o_fine.t[-1] * TIME_IN_GYR))]
        for i in loc:
            val, t = refine_extremum(o_fine, pot, i, sign, dt_nat)
            cands.append((sign * val, t))
        best = min(cands, key=lambda c: c[0])
        out[name] = (sign * best[0], best[1])
    return out


def make_orbits(pot, tag):
    ts = np.array(T_OUT) * u.Gyr
    ts_fine = np.linspace(0.0, 10.0, N_FINE) * u.Gyr
    ts_rk = np.linspace(0.0, 10.0, 11) * u.Gyr
    idx_fine = [int(round(t / 10.0 * (N_FINE - 1))) for t in T_OUT]
    idx_rk = [int(round(t)) for t in T_OUT]
    assert np.allclose(ts_fine.value[idx_fine], T_OUT, rtol=0, atol=1e-14)
    dt_nat = (10.0 / (N_FINE - 1)) / TIME_IN_GYR
    vc8 = vcirc(pot, 8.0 * u.kpc, quantity=True).to_value(KMS)
    out = {}
    for name, pos, vel in ORBITS:
        if vel is None:
            vel = (0.0, vc8, 0.0)
        o = integrate(pos, vel, pot, ts, rtol=RTOL, atol=RTOL)
        w = cart(o, ts)
        # the Cartesian -> galpy -> Cartesian round trip at t = 0
        assert np.max(np.abs(w[:, 0] - np.array(pos + vel))) < 1e-12 * max(map(abs, pos + vel))
        # stored values equal the raw natural-unit orbit times ro / vo
        raw = o.getOrbit()
        assert np.allclose(o.R(ts, quantity=True).to_value(u.kpc), raw[:, 0] * RO_KPC, rtol=1e-15, atol=0)
        energy = o.E(ts, pot=pot, quantity=True).to_value(KMS2)

        o_tol = integrate(pos, vel, pot, ts, rtol=RTOL_CHECK, atol=RTOL_CHECK)
        d_tol = rel_pos_vel(cart(o_tol, ts), w)

        o_f = integrate(pos, vel, pot, ts_fine, rtol=RTOL, atol=RTOL)
        wf = cart(o_f, ts_fine)
        d_dense = rel_pos_vel(wf[:, idx_fine], w)
        e_f = o_f.E(ts_fine, pot=pot, quantity=True).to_value(KMS2)
        e_drift = float(np.max(np.abs(e_f / e_f[0] - 1.0)))
        r_f = o_f.r(ts_fine, quantity=True).to_value(u.kpc)
        rperi_s = o_f.rperi(analytic=False, quantity=True).to_value(u.kpc)
        rap_s = o_f.rap(analytic=False, quantity=True).to_value(u.kpc)
        assert rperi_s == float(np.min(r_f)) and rap_s == float(np.max(r_f))
        pa = peri_apo(o_f, pot, r_f, dt_nat)

        d_rk = []
        for dt in RK6_DTS:
            o_rk = integrate(pos, vel, pot, ts_rk, method="rk6_c", dt=dt * u.Gyr)
            d_rk.append(rel_pos_vel(cart(o_rk, ts_rk)[:, idx_rk], w))

        R0, vR0, vT0, z0, vz0, phi0 = galpy_ic(pos, vel)
        rec = {
            "ic_pos_kpc": list(pos), "ic_vel_kms": [float(v) for v in vel],
            "galpy_ic": {"R_kpc": R0, "vR_kms": vR0, "vT_kms": vT0, "z_kpc": z0, "vz_kms": vz0,
                         "phi_rad": phi0},
            "x_kpc": fl(w[0]), "y_kpc": fl(w[1]), "z_kpc": fl(w[2]),
            "vx_kms": fl(w[3]), "vy_kms": fl(w[4]), "vz_kms": fl(w[5]),
            "energy_kms2": fl(energy),
            "rperi_kpc": pa["peri"][0], "t_peri_gyr": pa["peri"][1],
            "rap_kpc": pa["apo"][0], "t_apo_gyr": pa["apo"][1],
            "rperi_kpc_galpy_sampled": rperi_s, "rap_kpc_galpy_sampled": rap_s,
            "energy_max_rel_drift_fine": e_drift,
            "selfcheck": {
                "pos_rel_diff_rtol_1e-13_vs_1e-14": d_tol[0],
                "vel_rel_diff_rtol_1e-13_vs_1e-14": d_tol[1],
                "pos_rel_diff_dense_output_vs_outputs_only": d_dense[0],
                "vel_rel_diff_dense_output_vs_outputs_only": d_dense[1],
                "pos_rel_diff_rk6_c_dt_1e-4_gyr": d_rk[0][0],
                "vel_rel_diff_rk6_c_dt_1e-4_gyr": d_rk[0][1],
                "pos_rel_diff_rk6_c_dt_5e-5_gyr": d_rk[1][0],
                "vel_rel_diff_rk6_c_dt_5e-5_gyr": d_rk[1][1],
                "passed_1e-8": bool(max(d_tol + d_dense + d_rk[0] + d_rk[1]) < SELF_CHECK_TOL),
            },
        }
        if name == "circular_8":
            rec["vc_kms"] = vc8
            rec["r_max_rel_dev_from_8kpc_fine"] = float(np.max(np.abs(r_f / 8.0 - 1.0)))
            rec["z_max_abs_kpc_fine"] = float(np.max(np.abs(wf[2])))
        out[name] = rec
        sc = rec["selfcheck"]
        print("  %-15s %-14s tol %.1e dense %.1e rk6 %.1e/%.1e  dE %.1e  peri %.6f (sampled %.6f) "
              "apo %.6f (sampled %.6f)"
              % (tag, name, d_tol[0], d_dense[0], d_rk[0][0], d_rk[1][0], e_drift, rec["rperi_kpc"],
                 rperi_s, rec["rap_kpc"], rap_s))
    return out


# -------------------------------------------------------------------------------------------------

NOTES = (
    "Units: kpc, km/s, Gyr, Msun; phi_kms2 and energy_kms2 in (km/s)^2; densities Msun/kpc^3. "
    "galpy 1.12.1 with ro = 8 kpc, vo = 220 km/s on every object; all inputs astropy Quantities, "
    "outputs quantity=True converted with astropy. galpy's mass unit conversion.mass_in_msol(220, 8) "
    "implies G = vo^2 ro / mass_in_msol = galpy_G_kpc_kms2_msun (astropy CODATA 2018 G, IAU 2015 "
    "Msun); it differs from 4.300917270038e-6 by -4.0e-13 relative (G_rel_diff_galpy_vs_rust) and "
    "from the crate's G_KPC_KMS2_PER_MSUN = 4.300917270e-6 by 8.4e-12, so no mass rescaling is "
    "needed. "
    "galpy time unit conversion.time_in_Gyr(220, 8) uses the Julian year; 1 km/s = "
    "kms_in_kpc_per_gyr kpc/Gyr (the crate's KMS_IN_KPC_PER_GYR = 1.022712165 is this value "
    "truncated, 4.5e-11 relative). Potentials: 'nfw' = halo; 'nfw_disc_bulge' = halo + disc + bulge "
    "(components.*: galpy calls, physical parameters, galpy amplitude conventions - NFW amp = M_scale "
    "= 4 pi rho_s r_s^3, Hernquist amp = 2 x total mass, Miyamoto-Nagai amp = total mass - each "
    "verified against closed forms: checks.max_rel_diff_*). Closed forms use galpy's G. "
    "plane: z = 0, aligned with R_kpc; vcirc_kms = galpy vcirc(pot, R) = sqrt(-R F_R(R, 0)). offplane: "
    "(R_kpc[i], z_kpc[i]) pairs. force_R_* = F_R = -dPhi/dR, force_z_* = F_z = -dPhi/dz (galpy "
    "evaluateRforces / evaluatezforces: force per unit mass = acceleration; negative = pointing to "
    "the z axis / to the plane for z > 0), given in (km/s)^2/kpc and in km/s/Gyr (1 (km/s)^2/kpc = "
    "kms_in_kpc_per_gyr km/s/Gyr); galpy's own physical force unit is km/s/Myr. jeans: isotropic "
    "(beta = 0) spherical Jeans sigma_r, see jeans.method; for nfw_disc_bulge the tracer is the NFW "
    "halo and M(<r) includes the disc mass inside the sphere of radius r. orbits: initial "
    "conditions in Cartesian galactocentric x, y, z (kpc), vx, vy, vz (km/s), right-handed, "
    "converted to galpy's [R, vR, vT, z, vz, phi] with phi = atan2(y, x), vT = (x vy - y vx)/R "
    "(galpy_ic); outputs are Cartesian at t_gyr (arrays aligned with t_gyr, t = 0 is the initial "
    "condition); energy_kms2 = galpy o.E(pot=pot) = Phi + v^2/2. Integration: galpy "
    "method='dop853_c' rtol = atol = 1e-14 (galpy natural units; galpy's default is 1e-12), "
    "adaptive steps with dense output. rperi_kpc/rap_kpc = min/max of the spherical r over "
    "0 <= t <= 10 Gyr, refined (t_peri_gyr/t_apo_gyr = when; for circular_8 r is constant to "
    "~1e-12 and these times are arbitrary); *_galpy_sampled = galpy "
    "o.rperi(analytic=False)/o.rap(analytic=False) on the 100001-point (dt = 1e-4 Gyr) run, i.e. "
    "the extreme sample (low by O(dt^2)). energy_max_rel_drift_fine = max |E(t)/E(0) - 1| over that "
    "run. selfcheck: max over t_gyr of |dx|/|x| and |dv|/|v| between the stored run and (a) "
    "rtol = atol = 1e-13, (b) the dense-output samples of the fine run (galpy's dop853_c step "
    "sequence does not depend on the output times, so (b) checks only the dense interpolation), "
    "(c) fixed-step rk6_c with dt = 1e-4 Gyr and 5e-5 Gyr. Caveat found while writing this: "
    "galpy 1.12.1's pure-Python method='dop853' (and 'odeint') integrates 3D orbits in cylindrical "
    "coordinates and, when R changes sign (orbit through the z axis, e.g. 'polar'), adds pi to z "
    "instead of to phi (integrateFullOrbit.py: out[neg_radii, 3] += numpy.pi), producing z jumps of "
    "pi ro = 25.13 kpc; the C integrators (dop853_c, rk6_c, ias15_c) work in Cartesian "
    "coordinates and are unaffected. Do not use the Python 'dop853' fallback for such orbits."
)


def write(name, obj):
    path = os.path.join(OUT_DIR, name)
    with open(path, "w") as fh:
        json.dump(obj, fh, indent=1, allow_nan=False)
        fh.write("\n")
    print("wrote %s (%d bytes)" % (path, os.path.getsize(path)))


def main():
    comps = build_components()
    pots = {"nfw": comps["halo"], "nfw_disc_bulge": comps["halo"] + comps["disc"] + comps["bulge"]}
    kms_in_kpc_per_gyr = (1.0 * KMS).to_value(u.kpc / u.Gyr)
    units = {
        "ro_kpc": RO_KPC, "vo_kms": VO_KMS,
        "mass_in_msol": MASS_IN_MSOL,
        "time_in_gyr": TIME_IN_GYR,
        "galpy_G_kpc_kms2_msun": G_GALPY,
        "rust_G_kpc_kms2_msun": G_RUST,
        "G_rel_diff_galpy_vs_rust": G_GALPY / G_RUST - 1.0,
        "kms_in_kpc_per_gyr": kms_in_kpc_per_gyr,
        "force_kms2_per_kpc_per_natural": VO_KMS ** 2 / RO_KPC,
        "galpy_calls": "conversion.mass_in_msol(220.0, 8.0), conversion.time_in_Gyr(220.0, 8.0)",
    }
    print("galpy G = %.15e (rust %.15e, rel %.2e); mass_in_msol = %.10e; time_in_Gyr = %.15f"
          % (G_GALPY, G_RUST, G_GALPY / G_RUST - 1.0, MASS_IN_MSOL, TIME_IN_GYR))
    if abs(G_GALPY / G_RUST - 1.0) > 1e-6:
        print("WARNING: galpy G differs from the Rust G by more than 1e-6")

    components = component_checks(comps)
    for k, v in components.items():
        c = v["checks"]
        print("%-6s amp*mass_in_msol = %.10e  checks: %s" % (
            k, v["galpy_amp_natural_times_mass_in_msol"],
            ", ".join("%s %.1e" % (kk[13:], vv) for kk, vv in c.items() if kk.startswith("max_rel_diff"))))

    out = {
        "provenance": provenance(NOTES),
        "units": units,
        "components": components,
        "potentials": {},
        "orbit_settings": {
            "method": "dop853_c", "rtol": RTOL, "atol": RTOL, "rtol_check": RTOL_CHECK,
            "t_gyr": T_OUT, "n_fine": N_FINE, "dt_fine_gyr": 10.0 / (N_FINE - 1),
            "rk6_c_dt_gyr": RK6_DTS, "selfcheck_tolerance": SELF_CHECK_TOL,
        },
    }
    worst_force_route = 0.0
    for name, pot in pots.items():
        print("potential %s" % name)
        plane, off, dconv = make_tables(pot)
        worst_force_route = max(worst_force_route, dconv)
        blk = {
            "components": ["halo"] if name == "nfw" else ["halo", "disc", "bulge"],
            "galpy_expression": "halo" if name == "nfw" else "halo + disc + bulge",
            "plane": plane,
            "offplane": off,
        }
        blk["jeans"] = make_jeans_nfw(comps["halo"]) if name == "nfw" else make_jeans_ndb(comps, pot)
        blk["orbits"] = {"t_gyr": T_OUT, "orbits": make_orbits(pot, name)}
        out["potentials"][name] = blk
    units["max_rel_diff_force_quantity_vs_natural_route"] = worst_force_route

    # Sanity checks
    ok = True
    ndb = out["potentials"]["nfw_disc_bulge"]
    vc8 = ndb["plane"]["vcirc_kms"][R_PLANE.index(8.0)]
    good = 200.0 <= vc8 <= 240.0
    ok &= good
    print("vcirc(8 kpc) nfw_disc_bulge = %.6f km/s  %s" % (vc8, "ok" if good else "OUT OF 200-240"))
    print("vcirc(8 kpc) nfw = %.6f km/s" % out["potentials"]["nfw"]["plane"]["vcirc_kms"][R_PLANE.index(8.0)])
    for name, blk in out["potentials"].items():
        j = blk["jeans"]
        print("%s sigma_r: %s" % (name, " ".join("%.4f" % v for v in j["sigma_r_kms"])))
        for k in ("max_rel_diff_galpy_vs_scipy", "max_rel_diff_density_vs_gauss"):
            if k in j:
                good = j[k] < 1e-7
                ok &= good
                print("  %s %.2e %s" % (k, j[k], "ok" if good else "MISMATCH"))
        for oname, rec in blk["orbits"]["orbits"].items():
            good = rec["energy_max_rel_drift_fine"] < 1e-10 and rec["selfcheck"]["passed_1e-8"]
            if oname == "circular_8":
                good &= rec["r_max_rel_dev_from_8kpc_fine"] < 1e-10
                print("  circular_8: max |r/8-1| = %.2e, max |z| = %.1e kpc"
                      % (rec["r_max_rel_dev_from_8kpc_fine"], rec["z_max_abs_kpc_fine"]))
            ok &= good
            if not good:
                print("  %s %s FAILED energy/selfcheck" % (name, oname))
    for k, v in components.items():
        for kk, vv in v["checks"].items():
            if kk.startswith("max_rel_diff") and "galpy_vs_gauss" not in kk:
                good = vv < 1e-10
                ok &= good
                if not good:
                    print("component %s %s = %.2e MISMATCH" % (k, kk, vv))
    print("force quantity vs natural route max rel diff %.1e" % worst_force_route)
    write("orbits.json", out)
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
