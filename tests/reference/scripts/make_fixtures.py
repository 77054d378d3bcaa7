#!/usr/bin/env python3
"""Generate the JSON reference fixtures in tests/reference/ from general-purpose libraries.

Run from the repository root:

    python tests/reference/scripts/make_fixtures.py

Library versions (pinned in tests/reference/requirements.txt; python 3.12):
    colossus 1.4.0, astropy 8.0.2, scipy 1.18.1, numpy 2.5.5

Files written (all units stated in the key names, see tests/reference/README.md):

background.json
    Five cosmologies (planck18, wmap9, high_om, low_s8, open_w), each with radiation ("rad":
    colossus relspecies=True, Tcmb0=2.7255, Neff=3.046; astropy Tcmb0=2.7255 K, Neff=3.046,
    m_nu=0) and without ("norad": colossus relspecies=False; astropy Tcmb0=0).
    colossus objects are built with interpolation=False, persistence='':
        cosmology.setCosmology('planck18' | 'WMAP9', params={..., 'interpolation': False})
        cosmology.setCosmology(<name>, params={...})  for the custom ones
    Calls per z in [0, 0.1, 0.5, 1, 2, 3, 5, 10, 20]:
        co.Ez(z), co.age(z), co.lookbackTime(z), co.rho_c(z) * h**2, co.Om(z),
        co.growthFactor(z), co.growthFactorUnnormalized(z),
        peaks.collapseOverdensity(corrections=True, z=z)   (flat only),
        halo.mass_so.deltaVir(z)                             (flat only),
        astropy: cosmo.efunc(z), cosmo.age(z).to('Gyr'), cosmo.lookback_time(z).to('Gyr'),
                 cosmo.critical_density(z).to('Msun/kpc3'), cosmo.Om(z).
    dD/dz at z=0: co_interp.growthFactor(0.0, derivative=1) on a second colossus object with
    interpolation=True (interpolation=False refuses derivatives), plus a 4-point finite
    difference of co.growthFactorUnnormalized evaluated in a single call.
    Cross-check (not colossus): growth_scipy_ode = normalised solution of the linear growth ODE
        D'' + (2 + dlnE/dlna) D' - 1.5 Om(a) D = 0   (' = d/dlna, smooth radiation/DE)
    with the full colossus E(a) (radiation, curvature, w0), scipy.integrate.solve_ivp DOP853,
    rtol=1e-12, started at a=1e-8 on the growing mode D = 1 + 1.5 a/a_eq (D = a without radiation).

linear.json
    Flat cosmologies 1-4 with relspecies=True, interpolation=False, P(k) model 'eisenstein98'.
        colossus.cosmology.power_spectrum.transferFunction(k, h, Om0, Ob0, Tcmb0, model=m),
            m in {'eisenstein98', 'eisenstein98_zb'}
        peaks.lagrangianR(M*h); co.sigma(R, z) for z in {0, 1};
        co.sigma(R, 0, ps_args={'model': 'eisenstein98_zb'});
        co_interp.sigma(R, 0, derivative=True) / 3   (interpolation=True object);
        co.sigma(8.0, 0); co.sigma(R, 0, filt='sharp-k'); co.matterPowerSpectrum(k, 0);
        peaks.peakHeight(M*h, z); peaks.collapseOverdensity();
        mass_function.massFunction(M*h, z, q_in='M', mdef='fof', model='press74'|'sheth99',
            q_out='f')       on the interpolation=False object,
            q_out='dndlnM')  on the interpolation=True object (the conversion needs
                             d ln sigma / d ln R, which interpolation=False refuses).
    Cross-check (not colossus): *_hiacc = the same normalised colossus P(k) (T(k) from
    colossus.cosmology.power_spectrum.modelEisenstein98 / modelEisenstein98ZeroBaryon, times k^ns)
    integrated with fixed high-order Gauss-Legendre panels (relative accuracy ~1e-12), with its own
    normalisation sigma(8 Mpc/h) = sigma8; d sigma^2/dR from the analytic filter derivative.
    colossus' own sigma integral uses scipy quad with epsrel=3e-3 and integration limits picked on a
    grid in ln k spaced by 2, so co.sigma(R) has jumps of a few 1e-4 relative as R varies.

eps.json
    Extended Press-Schechter (Lacey & Cole 1993) for planck18 (relspecies=True), M0 = 1e12 Msun and
    M0 = 1e12 Msun/h at z0 = 0; S(M) = sigma^2(M, z=0) from the *_hiacc top-hat EH98 sigma above
    (colossus' P(k) model, smooth in M so that dS/dM is meaningful), delta_c = 1.68647
    (colossus.utils.constants.DELTA_COLLAPSE), w(z) = delta_c / D(z), D = co.growthFactor(z)
    (interpolation=False).  Integrals with scipy.integrate.quad (epsrel=1e-10) in ln M, split into
    sub-intervals; inside the integrals ln S(ln M) is a scipy CubicHermiteSpline through exact
    values and derivatives (step 0.02 in ln M, M0 a node), d ln S/d ln M a CubicSpline; point
    values use the exact integral.  Median half-mass formation redshift from scipy.optimize.brentq.
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
import scipy.interpolate
import scipy.optimize
import scipy.special

import astropy
import astropy.cosmology
import astropy.units as u

import colossus
from colossus.cosmology import cosmology, power_spectrum
from colossus.lss import peaks, mass_function
from colossus.halo import mass_so
from colossus.utils import constants

HERE = os.path.dirname(os.path.abspath(__file__))
OUT_DIR = os.path.dirname(HERE)  # tests/reference
SCRIPT = "tests/reference/scripts/make_fixtures.py"

TCMB0 = 2.7255
NEFF = 3.046
DELTA_C = constants.DELTA_COLLAPSE

Z_BACKGROUND = [0.0, 0.1, 0.5, 1.0, 2.0, 3.0, 5.0, 10.0, 20.0]
K_TRANSFER = [1e-4, 1e-3, 1e-2, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 50.0, 100.0]
MASS_MSUN = [1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15]
R_SHARPK = [0.1, 0.3, 1.0, 3.0]
K_PK = [0.001, 0.01, 0.1, 1.0, 10.0]
Z_MF = [0.0, 1.0, 2.0]
EPS_Z1 = [0.5, 1.0, 2.0, 4.0]
EPS_RATIOS = [1e-4, 1e-3, 1e-2, 0.1, 0.3, 0.5]
EPS_PZ_GRID = [0.25, 0.5, 0.872, 1.0, 1.5, 2.0]

# Name -> (colossus preset or None, parameter dict). H0 in km/s/Mpc.
COSMOLOGIES = {
    "planck18": ("planck18", dict(flat=True, H0=67.66, Om0=0.3111, Ob0=0.0490, sigma8=0.8102,
                                  ns=0.9665, de_model="lambda")),
    "wmap9": ("WMAP9", dict(flat=True, H0=69.32, Om0=0.2865, Ob0=0.0463, sigma8=0.820,
                            ns=0.9608, de_model="lambda")),
    "high_om": (None, dict(flat=True, H0=65.0, Om0=0.38, Ob0=0.05, sigma8=0.85, ns=0.96,
                           de_model="lambda")),
    "low_s8": (None, dict(flat=True, H0=72.0, Om0=0.28, Ob0=0.045, sigma8=0.72, ns=0.975,
                          de_model="lambda")),
    "open_w": (None, dict(flat=False, H0=70.0, Om0=0.30, Ode0=0.65, Ob0=0.047, sigma8=0.80,
                          ns=0.965, de_model="w0", w0=-0.9)),
}
FLAT_NAMES = ["planck18", "wmap9", "high_om", "low_s8"]

LIBRARIES = {
    "colossus": colossus.__version__ if hasattr(colossus, "__version__") else None,
    "astropy": astropy.__version__,
    "scipy": scipy.__version__,
    "numpy": np.__version__,
}


def _colossus_version():
    try:
        from colossus import version
        return version.__version__
    except Exception:  # pragma: no cover
        return LIBRARIES["colossus"]


LIBRARIES["colossus"] = _colossus_version()
TODAY = datetime.date.today().isoformat()


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


# -------------------------------------------------------------------------------------------------
# Cosmology construction
# -------------------------------------------------------------------------------------------------

def colossus_cosmo(name, relspecies=True, interpolation=False):
    preset, p = COSMOLOGIES[name]
    params = dict(p)
    if params["de_model"] == "lambda":
        params.pop("w0", None)
    params.update(relspecies=relspecies, Tcmb0=TCMB0, Neff=NEFF, interpolation=interpolation,
                  persistence="", print_warnings=False)
    if preset is not None:
        # check that our numbers are the preset's numbers
        for key, val in cosmology.cosmologies[preset].items():
            if key in params and key != "relspecies":
                assert params[key] == val, (name, key, params[key], val)
        co = cosmology.setCosmology(preset, params=params)
    else:
        co = cosmology.setCosmology(name, params=params)
    return co


def astropy_cosmo(name, relspecies=True):
    _, p = COSMOLOGIES[name]
    tcmb = TCMB0 if relspecies else 0.0
    kw = dict(H0=p["H0"], Om0=p["Om0"], Ob0=p["Ob0"], Tcmb0=tcmb * u.K, Neff=NEFF,
              m_nu=0.0 * u.eV, name=name)
    if p["flat"] and p["de_model"] == "lambda":
        return astropy.cosmology.FlatLambdaCDM(**kw)
    if p["de_model"] == "w0":
        if p["flat"]:
            return astropy.cosmology.FlatwCDM(w0=p["w0"], **kw)
        return astropy.cosmology.wCDM(Ode0=p["Ode0"], w0=p["w0"], **kw)
    return astropy.cosmology.LambdaCDM(Ode0=p["Ode0"], **kw)


def colossus_params(co):
    return {
        "h": co.h, "H0": co.H0, "Om0": co.Om0, "Ob0": co.Ob0, "Ode0": co.Ode0, "Ok0": co.Ok0,
        "Or0": co.Or0, "Ogamma0": co.Ogamma0, "Onu0": co.Onu0, "sigma8": co.sigma8, "ns": co.ns,
        "flat": bool(co.flat), "de_model": co.de_model, "w0": float(co.w0),
        "relspecies": bool(co.relspecies), "Tcmb0": co.Tcmb0, "Neff": co.Neff,
        "interpolation": bool(co.interpolation),
    }


def astropy_params(ap):
    return {
        "class": type(ap).__name__, "H0": ap.H0.value, "Om0": ap.Om0, "Ob0": ap.Ob0,
        "Ode0": ap.Ode0, "Ok0": ap.Ok0, "Ogamma0": ap.Ogamma0, "Onu0": ap.Onu0,
        "Or0": ap.Ogamma0 + ap.Onu0, "Tcmb0_K": ap.Tcmb0.value, "Neff": ap.Neff,
        "m_nu_ev": fl(np.atleast_1d(ap.m_nu.value)) if ap.m_nu is not None else None,
        "w0": float(getattr(ap, "w0", -1.0)),
    }


# -------------------------------------------------------------------------------------------------
# Independent growth-factor ODE (cross-check only)
# -------------------------------------------------------------------------------------------------

def growth_ode(co, z_list):
    """Normalised D(z), and dD/dz at z=0, from the full linear growth ODE with colossus' E(a)."""
    Om0, Ok0, Or0, Ode0 = co.Om0, co.Ok0, (co.Or0 if co.relspecies else 0.0), co.Ode0
    w = float(co.w0)

    def terms(a):
        tr = Or0 * a ** -4
        tm = Om0 * a ** -3
        tk = Ok0 * a ** -2
        td = Ode0 * a ** (-3.0 * (1.0 + w))
        return tr, tm, tk, td

    def rhs(x, y):
        a = math.exp(x)
        tr, tm, tk, td = terms(a)
        e2 = tr + tm + tk + td
        dlne = (-4.0 * tr - 3.0 * tm - 2.0 * tk - 3.0 * (1.0 + w) * td) / (2.0 * e2)
        om = tm / e2
        return [y[1], -(2.0 + dlne) * y[1] + 1.5 * om * y[0]]

    a_i = 1e-8
    if Or0 > 0:
        y_eq = a_i * Om0 / Or0
        y0 = [1.0 + 1.5 * y_eq, 1.5 * y_eq]
    else:
        y0 = [a_i, a_i]
    x_eval = sorted(set([-math.log1p(z) for z in z_list] + [0.0]))
    sol = scipy.integrate.solve_ivp(rhs, (math.log(a_i), 0.0), y0, method="DOP853", t_eval=x_eval,
                                    rtol=1e-12, atol=1e-14 * y0[0])
    assert sol.status == 0
    d = dict(zip([round(v, 12) for v in sol.t], sol.y[0]))
    dp = dict(zip([round(v, 12) for v in sol.t], sol.y[1]))
    d0 = d[0.0]
    D = [d[round(-math.log1p(z), 12)] / d0 for z in z_list]
    dDdz0 = -dp[0.0] / d0  # dD/dz = -(dD/dlna)/(1+z)
    return D, dDdz0


# -------------------------------------------------------------------------------------------------
# High-accuracy sigma(R) of the colossus EH98 power spectrum (cross-check, and smooth S(M) for EPS)
# -------------------------------------------------------------------------------------------------

_GL_X, _GL_W = np.polynomial.legendre.leggauss(12)


def _gl_nodes(edges):
    edges = np.asarray(edges, float)
    a, b = edges[:-1], edges[1:]
    half = 0.5 * (b - a)
    mid = 0.5 * (b + a)
    x = (mid[:, None] + half[:, None] * _GL_X[None, :]).ravel()
    wts = (half[:, None] * _GL_W[None, :]).ravel()
    return x, wts


def tophat_w(x):
    x = np.asarray(x, float)
    out = np.empty_like(x)
    s = x < 0.1
    xs = x[s]
    x2 = xs * xs
    out[s] = 1.0 - x2 / 10.0 + x2 * x2 / 280.0 - x2 ** 3 / 15120.0 + x2 ** 4 / 1330560.0
    xl = x[~s]
    out[~s] = 3.0 * (np.sin(xl) - xl * np.cos(xl)) / xl ** 3
    return out


def tophat_dw(x):
    x = np.asarray(x, float)
    out = np.empty_like(x)
    s = x < 0.1
    xs = x[s]
    x2 = xs * xs
    out[s] = -xs / 5.0 + xs * x2 / 70.0 - xs * x2 * x2 / 2520.0 + xs * x2 ** 3 / 166320.0
    xl = x[~s]
    out[~s] = 3.0 * np.sin(xl) / xl ** 2 - 9.0 * (np.sin(xl) - xl * np.cos(xl)) / xl ** 4
    return out


class HiAccSigma:
    """sigma(R) for P(k) = norm * T(k)^2 k^ns, T from colossus; k in h/Mpc, R in Mpc/h."""

    K_MIN = 1e-7

    def __init__(self, co, model="eisenstein98", panels_per_e=50, panels_per_halfpi=2):
        self.h, self.Om0, self.Ob0, self.Tcmb0, self.ns = co.h, co.Om0, co.Ob0, co.Tcmb0, co.ns
        if model == "eisenstein98":
            self.tf = lambda k: power_spectrum.modelEisenstein98(k, self.h, self.Om0, self.Ob0,
                                                                  self.Tcmb0)
        elif model == "eisenstein98_zb":
            self.tf = lambda k: power_spectrum.modelEisenstein98ZeroBaryon(k, self.h, self.Om0,
                                                                            self.Ob0, self.Tcmb0)
        else:
            raise ValueError(model)
        self.ppe = panels_per_e
        self.pph = panels_per_halfpi
        self.norm = 1.0
        self.norm = co.sigma8 ** 2 / self.sigma2(8.0)

    def pk(self, k):
        k = np.asarray(k, float)
        return self.norm * self.tf(k) ** 2 * k ** self.ns

    def _nodes(self, R, filt):
        """k nodes and dk weights covering the integration range."""
        if filt == "sharp-k":
            lo, hi = math.log(self.K_MIN), math.log(1.0 / R)
            n = max(int((hi - lo) * self.ppe), 8)
            x, wt = _gl_nodes(np.linspace(lo, hi, n + 1))
            k = np.exp(x)
            return k, wt * k
        # ln k panels up to kR = 10, then linear-k panels (quarter period of W^2) up to kR = 3000.
        lo, mid = math.log(self.K_MIN), math.log(10.0 / R)
        n = max(int((mid - lo) * self.ppe), 8)
        x1, w1 = _gl_nodes(np.linspace(lo, mid, n + 1))
        k1 = np.exp(x1)
        k_hi = 3000.0 / R
        dk = (math.pi / R) / (2.0 * self.pph)
        n2 = int(math.ceil((k_hi - 10.0 / R) / dk))
        k2, w2 = _gl_nodes(10.0 / R + dk * np.arange(n2 + 1))
        return np.concatenate([k1, k2]), np.concatenate([w1 * k1, w2])

    def sigma2(self, R, filt="tophat"):
        k, wt = self._nodes(R, filt)
        if filt == "sharp-k":
            win2 = 1.0
        else:
            win2 = tophat_w(k * R) ** 2
        return float(np.sum(wt * self.pk(k) * k * k * win2) / (2.0 * math.pi ** 2))

    def sigma(self, R, filt="tophat"):
        return math.sqrt(self.sigma2(R, filt))

    def dsigma2_dR(self, R):
        k, wt = self._nodes(R, "tophat")
        x = k * R
        return float(np.sum(wt * self.pk(k) * k ** 3 * 2.0 * tophat_w(x) * tophat_dw(x))
                     / (2.0 * math.pi ** 2))

    def dlnsigma_dlnR(self, R):
        return 0.5 * R * self.dsigma2_dR(R) / self.sigma2(R)


def hiacc_selfcheck(co):
    """Compare two resolutions of the Gauss-Legendre sigma; returns max relative difference."""
    a = HiAccSigma(co)
    b = HiAccSigma(co, panels_per_e=100, panels_per_halfpi=4)
    worst = 0.0
    for R in [0.01, 0.1, 1.0, 8.0, 30.0]:
        worst = max(worst, abs(a.sigma(R) / b.sigma(R) - 1.0),
                    abs(a.dlnsigma_dlnR(R) / b.dlnsigma_dlnR(R) - 1.0),
                    abs(a.sigma(R, "sharp-k") / b.sigma(R, "sharp-k") - 1.0))
    return worst


# -------------------------------------------------------------------------------------------------
# background.json
# -------------------------------------------------------------------------------------------------

def growth_fd(co, z0=0.0, step=0.01):
    """4-point central difference of colossus' normalised growth, all points in one call."""
    zs = np.array([z0 - 2 * step, z0 - step, z0 + step, z0 + 2 * step, 0.0])
    D = co.growthFactorUnnormalized(zs)
    D = D / D[-1]
    return float((D[0] - 8.0 * D[1] + 8.0 * D[2] - D[3]) / (12.0 * step))


def make_background():
    z = np.array(Z_BACKGROUND)
    out = {
        "provenance": provenance(
            "Per cosmology and radiation variant ('rad': colossus relspecies=True, astropy "
            "Tcmb0=2.7255 K, Neff=3.046, m_nu=0; 'norad': colossus relspecies=False, astropy "
            "Tcmb0=0). colossus objects use interpolation=False and persistence=''. Arrays are "
            "aligned with 'z'. colossus ages use its year of 31556925.2 s; astropy uses the Julian "
            "year (31557600 s), hence age/lookback differ by ~2.14e-5 relative. colossus "
            "rho_c(z) = 277.536627245708 h^2 Msun/kpc^3 * E(z)^2 (its constants), astropy uses "
            "CODATA G and IAU Msun. Growth: colossus normalises growthFactor to D(0)=1. For "
            "de_model='lambda' it evaluates the Heath (1977) integral D ~ (5/2) Om0 E_D(z) "
            "int_z^inf (1+z')/E_D^3 dz', where E_D^2 = Om0(1+z)^3 + Ode0 + Ok0(1+z)^2 + Or0, "
            "i.e. radiation is added as a CONSTANT (not (1+z)^4); with relspecies=True it "
            "switches to an analytic matter+radiation formula (Gnedin et al. 2011 eq. 5) above "
            "z=20 and blends linearly in ln(a) between z=5 and z=20. With relspecies=False it is "
            "the exact Heath integral. For de_model='w0' (open_w) it solves the Linder & Jenkins "
            "(2003) eq. 11 ODE with X = Om(z)/Ode(z) (a flat-universe equation: curvature is "
            "ignored in the growth, solve_ivp rtol=atol=1e-6). growth_scipy_ode is an "
            "independent cross-check (full ODE with colossus' E(a), radiation smooth). "
            "delta_c = 1.68647 * Om(z)^0.0055 (colossus corrections=True, flat only; colossus "
            "applies no correction for non-flat cosmologies with dark energy, so null here for "
            "open_w); delta_vir_crit = Bryan & Norman 1998, 18 pi^2 + 82x - 39x^2, x = Om(z)-1 "
            "(flat only, null for open_w). dgrowth_dz_z0 comes from a second colossus object "
            "with interpolation=True (spline derivative; interpolation=False refuses "
            "derivatives; it is ~1e-4 relative off); dgrowth_dz_z0_fd is a 4-point finite difference of "
            "growthFactorUnnormalized (step 0.01); dgrowth_dz_z0_scipy_ode from the cross-check ODE."),
        "z": fl(z),
        "colossus_constants": {
            "RHO_CRIT_0_KPC3_msun_h2_kpc3": constants.RHO_CRIT_0_KPC3,
            "RHO_CRIT_0_MPC3_msun_h2_mpc3": constants.RHO_CRIT_0_MPC3,
            "YEAR_s": constants.YEAR, "GYR_s": constants.GYR, "MPC_cm": constants.MPC,
            "KPC_cm": constants.KPC, "G_kpc_km2_s2_msun": constants.G, "G_CGS": constants.G_CGS,
            "MSUN_g": constants.MSUN, "DELTA_COLLAPSE": constants.DELTA_COLLAPSE,
            "Ogamma0_times_h2_over_Tcmb0_4": 4.4814665013636476E-07,
            "Onu0_over_Neff_Ogamma0": 0.22710731766,
        },
        "cosmologies": {},
    }
    for name in COSMOLOGIES:
        _, p = COSMOLOGIES[name]
        entry = {"input": {k: v for k, v in p.items()}, "variants": {}}
        entry["input"]["h"] = p["H0"] / 100.0
        entry["input"]["Tcmb0"] = TCMB0
        entry["input"]["Neff"] = NEFF
        for variant, rel in [("rad", True), ("norad", False)]:
            co = colossus_cosmo(name, relspecies=rel, interpolation=False)
            coi = colossus_cosmo(name, relspecies=rel, interpolation=True)
            cosmology.setCurrent(co)
            ap = astropy_cosmo(name, relspecies=rel)
            h = co.h
            v = {"colossus_params": colossus_params(co), "astropy_params": astropy_params(ap)}
            if co.de_model == "lambda":
                v["colossus_growth_method"] = (
                    "Heath integral with E_D (radiation as constant)" +
                    ("; analytic matter+radiation formula above z=20, blended for 5<z<20"
                     if rel else ""))
            else:
                v["colossus_growth_method"] = (
                    "Linder & Jenkins 2003 eq. 11 ODE (flat-universe form, X=Om(z)/Ode(z); "
                    "curvature ignored)" +
                    ("; analytic matter+radiation formula above z=20, blended for 5<z<20"
                     if rel else ""))
            v["e_z"] = fl(co.Ez(z))
            v["e_z_astropy"] = fl(ap.efunc(z))
            v["age_gyr"] = fl(co.age(z))
            v["age_gyr_astropy"] = fl(ap.age(z).to("Gyr").value)
            v["lookback_gyr"] = fl(co.lookbackTime(z))
            v["lookback_gyr_astropy"] = fl(ap.lookback_time(z).to("Gyr").value)
            v["rho_crit_msun_h2_kpc3"] = fl(co.rho_c(z))
            v["rho_crit_msun_kpc3"] = fl(co.rho_c(z) * h ** 2)
            v["rho_crit_msun_kpc3_astropy"] = fl(ap.critical_density(z).to(u.Msun / u.kpc ** 3).value)
            v["omega_m_z"] = fl(co.Om(z))
            v["omega_m_z_astropy"] = fl(ap.Om(z))
            v["growth"] = fl(co.growthFactor(z))
            v["growth_unnormalized"] = fl(co.growthFactorUnnormalized(z))
            D_ode, dDdz_ode = growth_ode(co, Z_BACKGROUND)
            v["growth_scipy_ode"] = fl(D_ode)
            v["dgrowth_dz_z0"] = fl(coi.growthFactor(0.0, derivative=1))
            v["dgrowth_dz_z0_fd"] = growth_fd(co)
            v["dgrowth_dz_z0_scipy_ode"] = dDdz_ode
            if co.flat:
                v["delta_c"] = fl([peaks.collapseOverdensity(corrections=True, z=zz) for zz in z])
                v["delta_vir_crit"] = fl(mass_so.deltaVir(z))
            else:
                v["delta_c"] = None
                v["delta_vir_crit"] = None
            entry["variants"][variant] = v
        out["cosmologies"][name] = entry
    return out


# -------------------------------------------------------------------------------------------------
# linear.json
# -------------------------------------------------------------------------------------------------

def make_linear():
    k_t = np.array(K_TRANSFER)
    masses = np.array(MASS_MSUN)
    out = {
        "provenance": provenance(
            "Flat cosmologies, colossus relspecies=True, interpolation=False, persistence='', "
            "power spectrum model 'eisenstein98' (EH98) unless stated. Physical units: "
            "M_phys = M_h/h, R[Mpc] = R[Mpc/h]/h, k[1/Mpc] = k[h/Mpc]*h, P[Mpc^3] = P[(Mpc/h)^3]/h^3, "
            "dn/dlnM[Mpc^-3] = dn/dlnM[(Mpc/h)^-3]*h^3. Radii are comoving Lagrangian radii "
            "R = (3 M / (4 pi rho_m0))^(1/3) with colossus rho_m0 = Om0 * 2.77536627245708e11 "
            "h^2 Msun/Mpc^3. dlnsigma_dlnm is the signed d ln sigma / d ln M (negative) from a "
            "colossus object with interpolation=True (co.sigma(R, 0, derivative=True)/3). "
            "massFunction(q_out='f') is from the interpolation=False object; "
            "massFunction(q_out='dndlnM') requires d ln sigma/d ln R, which colossus refuses with "
            "interpolation=False, so it comes from the interpolation=True object (its sigma is then "
            "also the spline one). colossus massFunction passes deltac_args={} so press74/sheth99 "
            "use the CONSTANT delta_c = 1.68647 (no Om(z) correction); nu = 1.68647/sigma(M,z). "
            "sheth99: f = A sqrt(2a nu^2/pi) exp(-a nu^2/2) (1 + (a nu^2)^-p), A=0.3222, a=0.707, "
            "p=0.3. *_hiacc: same colossus T(k) and n_s, normalised to sigma8 with its own "
            "integral, integrated by Gauss-Legendre panels (rel. accuracy ~1e-12); colossus' own "
            "sigma integral uses scipy quad epsrel=3e-3 with automatic k limits and differs from "
            "*_hiacc by up to a few 1e-4 (see max_rel_diff). colossus' P(k) normalisation uses its "
            "own sigma(8) integral (differs from norm_hiacc by ~1e-5). colossus' spline derivative "
            "dlnsigma_dlnm differs from dlnsigma_dlnm_hiacc by up to ~4e-3 and its dndlnM by up to "
            "~6e-3 (see max_rel_diff_* fields): use the *_hiacc values for tight tolerances. "
            "transferFunction lives in colossus.cosmology.power_spectrum "
            "(deprecated wrapper of modelEisenstein98 / modelEisenstein98ZeroBaryon)."),
        "delta_c": DELTA_C,
        "cosmologies": {},
    }
    for name in FLAT_NAMES:
        co = colossus_cosmo(name, relspecies=True, interpolation=False)
        coi = colossus_cosmo(name, relspecies=True, interpolation=True)
        cosmology.setCurrent(co)
        h = co.h
        hi = HiAccSigma(co)
        hi_zb = HiAccSigma(co, model="eisenstein98_zb")
        entry = {"colossus_params": colossus_params(co)}

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            t98 = power_spectrum.transferFunction(k_t, h, co.Om0, co.Ob0, co.Tcmb0,
                                                  model="eisenstein98")
            tzb = power_spectrum.transferFunction(k_t, h, co.Om0, co.Ob0, co.Tcmb0,
                                                  model="eisenstein98_zb")
        entry["transfer"] = {"k_h_mpc": fl(k_t), "k_mpc": fl(k_t * h),
                             "t_eh98": fl(t98), "t_eh98_nowiggle": fl(tzb)}

        mh = masses * h
        R = peaks.lagrangianR(mh)
        D1 = float(co.growthFactor(1.0))
        s0 = np.array([co.sigma(r, 0.0) for r in R])
        s1 = np.array([co.sigma(r, 1.0) for r in R])
        szb = np.array([co.sigma(r, 0.0, ps_args={"model": "eisenstein98_zb"}) for r in R])
        cosmology.setCurrent(coi)
        dls = np.array([coi.sigma(r, 0.0, derivative=True) for r in R]) / 3.0
        cosmology.setCurrent(co)
        s0_hi = np.array([hi.sigma(r) for r in R])
        szb_hi = np.array([hi_zb.sigma(r) for r in R])
        dls_hi = np.array([hi.dlnsigma_dlnR(r) for r in R]) / 3.0
        entry["sigma"] = {
            "mass_msun": fl(masses), "mass_msun_h": fl(mh),
            "radius_mpc_h": fl(R), "radius_mpc": fl(R / h),
            "growth_z1": D1,
            "sigma_z0": fl(s0), "sigma_z1": fl(s1), "sigma_nowiggle_z0": fl(szb),
            "dlnsigma_dlnm": fl(dls),
            "sigma_z0_hiacc": fl(s0_hi), "sigma_z1_hiacc": fl(s0_hi * D1),
            "sigma_nowiggle_z0_hiacc": fl(szb_hi), "dlnsigma_dlnm_hiacc": fl(dls_hi),
            "max_rel_diff_sigma_colossus_vs_hiacc": float(np.max(np.abs(s0 / s0_hi - 1))),
            "max_rel_diff_dlnsigma_dlnm_colossus_vs_hiacc": float(np.max(np.abs(dls / dls_hi - 1))),
        }
        entry["sigma8_check"] = {
            "radius_mpc_h": 8.0, "radius_mpc": 8.0 / h, "sigma8_input": co.sigma8,
            "sigma_colossus": float(co.sigma(8.0, 0.0)), "sigma_hiacc": hi.sigma(8.0),
            "sigma_nowiggle_colossus": float(co.sigma(8.0, 0.0, ps_args={"model": "eisenstein98_zb"})),
        }
        rs = np.array(R_SHARPK)
        sk = np.array([co.sigma(r, 0.0, filt="sharp-k") for r in rs])
        sk_hi = np.array([hi.sigma(r, "sharp-k") for r in rs])
        entry["sharp_k"] = {"radius_mpc_h": fl(rs), "radius_mpc": fl(rs / h),
                            "sigma_z0": fl(sk), "sigma_z0_hiacc": fl(sk_hi)}
        kp = np.array(K_PK)
        pk = co.matterPowerSpectrum(kp, 0.0)
        pk_hi = hi.pk(kp)
        entry["power_spectrum"] = {
            "k_h_mpc": fl(kp), "k_mpc": fl(kp * h),
            "pk_mpc_h3": fl(pk), "pk_mpc3": fl(pk / h ** 3),
            "pk_mpc_h3_hiacc": fl(pk_hi), "pk_mpc3_hiacc": fl(pk_hi / h ** 3),
            "norm_colossus": float(co.matterPowerSpectrumNorm("eisenstein98")),
            "norm_hiacc": hi.norm,
            "definition": "P(k) = norm * T_EH98(k)^2 * k^ns, k in h/Mpc, P in (Mpc/h)^3",
        }

        rho_m0 = co.rho_m(0.0) * 1e9  # Msun h^2 / Mpc^3
        mf = {"z": fl(Z_MF), "delta_c": float(peaks.collapseOverdensity()),
              "rho_m0_msun_h2_mpc3": rho_m0, "rho_m0_msun_mpc3": rho_m0 * h ** 2,
              "mdef": "fof", "by_z": []}
        for zz in Z_MF:
            Dz = float(co.growthFactor(zz))
            cosmology.setCurrent(co)
            nu = np.array(peaks.peakHeight(mh, zz))
            sig = np.array([co.sigma(r, zz) for r in R])
            f_ps = mass_function.massFunction(mh, zz, q_in="M", q_out="f", mdef="fof", model="press74")
            f_st = mass_function.massFunction(mh, zz, q_in="M", q_out="f", mdef="fof", model="sheth99")
            cosmology.setCurrent(coi)
            n_ps = mass_function.massFunction(mh, zz, q_in="M", q_out="dndlnM", mdef="fof", model="press74")
            n_st = mass_function.massFunction(mh, zz, q_in="M", q_out="dndlnM", mdef="fof", model="sheth99")
            cosmology.setCurrent(co)
            # high-accuracy versions from the formulas
            sig_hi = s0_hi * Dz
            nu_hi = DELTA_C / sig_hi
            fps_hi = np.sqrt(2.0 / np.pi) * nu_hi * np.exp(-0.5 * nu_hi ** 2)
            A, a, pp = 0.3222, 0.707, 0.3
            nup = a * nu_hi ** 2
            fst_hi = A * np.sqrt(nup * 2.0 / np.pi) * np.exp(-0.5 * nup) * (1.0 + nup ** -pp)
            conv = rho_m0 / mh * np.abs(dls_hi)
            mf["by_z"].append({
                "z": zz, "growth": Dz,
                "sigma": fl(sig), "nu": fl(nu), "f_ps": fl(f_ps), "f_st": fl(f_st),
                "dndlnm_ps_mpc_h3": fl(n_ps), "dndlnm_st_mpc_h3": fl(n_st),
                "dndlnm_ps_mpc3": fl(n_ps * h ** 3), "dndlnm_st_mpc3": fl(n_st * h ** 3),
                "sigma_hiacc": fl(sig_hi), "nu_hiacc": fl(nu_hi),
                "f_ps_hiacc": fl(fps_hi), "f_st_hiacc": fl(fst_hi),
                "dndlnm_ps_mpc_h3_hiacc": fl(fps_hi * conv), "dndlnm_st_mpc_h3_hiacc": fl(fst_hi * conv),
                "dndlnm_ps_mpc3_hiacc": fl(fps_hi * conv * h ** 3),
                "dndlnm_st_mpc3_hiacc": fl(fst_hi * conv * h ** 3),
                "max_rel_diff_dndlnm_colossus_vs_hiacc": float(max(
                    np.max(np.abs(n_ps / (fps_hi * conv) - 1)),
                    np.max(np.abs(n_st / (fst_hi * conv) - 1)))),
            })
        entry["mass_function"] = mf
        out["cosmologies"][name] = entry
    return out


# -------------------------------------------------------------------------------------------------
# eps.json
# -------------------------------------------------------------------------------------------------

class EPS:
    """Lacey & Cole EPS quantities for one parent halo (masses in Msun/h, radii in Mpc/h).

    Point values (S at M0 and M1) use the exact high-accuracy integral.  Inside the quad integrals
    ln S(ln M) is a cubic Hermite spline through exact values and exact derivatives on a grid of
    step 0.02 in ln M that contains ln M0 as a node, and d ln S / d ln M is a cubic spline through
    the exact derivatives (interpolation error ~1e-10 relative).
    """

    STEP = 0.02

    def __init__(self, co, hi, m0_msun_h):
        self.co, self.hi = co, hi
        cosmology.setCurrent(co)
        self.m0 = m0_msun_h
        self.rho_m0 = co.rho_m(0.0) * 1e9
        self.S0 = self.S(m0_msun_h)
        self.w0 = DELTA_C / 1.0  # D(z0=0) = 1
        lnm0 = math.log(m0_msun_h)
        grid = lnm0 + self.STEP * np.arange(-int(round(11.0 / self.STEP)), int(round(0.2 / self.STEP)) + 1)
        S = np.array([self.S(math.exp(x)) for x in grid])
        dlnS = np.array([self.dS_dlnM(math.exp(x)) for x in grid]) / S
        self._lnS = scipy.interpolate.CubicHermiteSpline(grid, np.log(S), dlnS)
        self._dlnS = scipy.interpolate.CubicSpline(grid, dlnS)
        i0 = int(np.argmin(np.abs(grid - lnm0)))
        assert abs(S[i0] / self.S0 - 1.0) < 1e-14

    def R(self, m):
        return (3.0 * m / (4.0 * math.pi * self.rho_m0)) ** (1.0 / 3.0)

    def S(self, m):
        return self.hi.sigma2(self.R(m))

    def dS_dlnM(self, m):
        r = self.R(m)
        return self.hi.dsigma2_dR(r) * r / 3.0

    def w(self, z):
        return DELTA_C / float(self.co.growthFactor(z))

    @staticmethod
    def f_lc(S1, w1, S0, w0):
        dS = S1 - S0
        dw = w1 - w0
        if dS <= 0.0:
            return 0.0
        return dw / math.sqrt(2.0 * math.pi) / dS ** 1.5 * math.exp(-dw * dw / (2.0 * dS))

    def integrand_lnM(self, lnm, w1, weighted=True):
        lnS = float(self._lnS(lnm))
        S = math.exp(lnS)
        dS = abs(float(self._dlnS(lnm))) * S
        val = self.f_lc(S, w1, self.S0, self.w0) * dS
        return val * (self.m0 / math.exp(lnm) if weighted else 1.0)

    def integrate(self, m_lo, w1, weighted=True):
        lo, hi = math.log(m_lo), math.log(self.m0)
        extra = [hi - d for d in (0.3, 0.1, 0.03, 0.01, 0.003, 0.001)]
        edges = np.unique(np.concatenate([np.arange(lo, hi, 0.5), extra, [hi]]))
        edges = edges[(edges >= lo) & (edges <= hi)]
        tot = 0.0
        for a, b in zip(edges[:-1], edges[1:]):
            v, _ = scipy.integrate.quad(self.integrand_lnM, a, b, args=(w1, weighted),
                                        epsabs=0.0, epsrel=1e-10, limit=200)
            tot += v
        return tot

    def mass_fraction(self, m1, w1):
        return math.erfc((w1 - self.w0) / math.sqrt(2.0 * (self.S(m1) - self.S0)))

    def n_greater(self, m1, w1):
        return self.integrate(m1, w1, weighted=True)

    def dn_dlnm(self, m1, w1):
        return self.f_lc(self.S(m1), w1, self.S0, self.w0) * abs(self.dS_dlnM(m1)) * self.m0 / m1

    def p_zf_greater(self, z):
        return self.integrate(0.5 * self.m0, self.w(z), weighted=True)

    def z_half(self):
        return scipy.optimize.brentq(lambda z: self.p_zf_greater(z) - 0.5, 0.05, 5.0,
                                     xtol=1e-12, rtol=1e-12)


def make_eps():
    co = colossus_cosmo("planck18", relspecies=True, interpolation=False)
    cosmology.setCurrent(co)
    h = co.h
    hi = HiAccSigma(co)
    out = {
        "provenance": provenance(
            "Extended Press-Schechter (Lacey & Cole 1993), planck18 with colossus relspecies=True, "
            "interpolation=False. S(M) = sigma^2(M, z=0) for the top-hat filter from the "
            "high-accuracy integral of colossus' EH98 P(k) (the *_hiacc sigma of linear.json, "
            "normalised to sigma(8 Mpc/h) = sigma8), because colossus' own sigma (quad "
            "epsrel=3e-3, jumping k limits) is not smooth enough in M for dS/dM; colossus sigma "
            "values at M0 are listed for comparison. Lagrangian radius R = (3M/(4 pi rho_m0))^(1/3) "
            "with colossus rho_m0 (M in Msun/h, R in Mpc/h). delta_c = 1.68647 constant, "
            "w(z) = delta_c/D(z), D = co.growthFactor(z) normalised to D(0)=1, w0 = delta_c. "
            "f(S1,w1|S0,w0) = (w1-w0)/sqrt(2 pi)/(S1-S0)^1.5 exp(-(w1-w0)^2/(2(S1-S0))). "
            "mass_fraction_gt_m1 = erfc((w1-w0)/sqrt(2(S1-S0))); "
            "n_gt_m1 = int_{M1}^{M0} (M0/M) f |dS/dlnM| dlnM; "
            "dn_dlnm1 = (M0/M1) f(S1) |dS/dlnM1| (per unit ln M1, equal to dN/dln(M1/M0)); "
            "mass_fraction_gt_m1_integral = int_{M1}^{M0} f |dS/dlnM| dlnM (numerical check of "
            "the erfc). P(z_f > z) = int_{M0/2}^{M0} (M0/M1) f(S1, w(z)|S0, w0) |dS1/dlnM1| dlnM1, "
            "z_half_median solves P = 0.5 (brentq). quad epsrel=1e-10 in ln M on sub-intervals of "
            "width <=0.5 with extra breaks at ln M0 - {0.3, 0.1, 0.03, 0.01, 0.003, 0.001}; inside "
            "the integrals S and dS/dlnM come from splines through exact values on a 0.02 grid "
            "in ln M (error ~1e-10); point values (s1, sigma1, mass_fraction_gt_m1, dn_dlnm1) "
            "use the exact integral. Masses: *_msun physical, *_msun_h in Msun/h."),
        "cosmology": "planck18",
        "colossus_params": colossus_params(co),
        "delta_c": DELTA_C,
        "z0": 0.0,
        "z1": fl(EPS_Z1),
        "mass_ratio": fl(EPS_RATIOS),
        "growth": {"z": fl(sorted(set(EPS_Z1 + EPS_PZ_GRID))),
                   "d": fl([co.growthFactor(zz) for zz in sorted(set(EPS_Z1 + EPS_PZ_GRID))])},
        "parents": [],
    }
    parents = [("m0_1e12_msun", 1e12 * h), ("m0_1e12_msun_h", 1e12)]
    for label, m0h in parents:
        e = EPS(co, hi, m0h)
        cosmology.setCurrent(co)
        r0 = e.R(m0h)
        par = {
            "label": label, "m0_msun": m0h / h, "m0_msun_h": m0h,
            "radius0_mpc_h": r0, "radius0_mpc": r0 / h,
            "sigma0": math.sqrt(e.S0), "s0": e.S0,
            "sigma0_colossus": float(co.sigma(peaks.lagrangianR(m0h), 0.0)),
            "dlnsigma_dlnm0": e.dS_dlnM(m0h) / (2.0 * e.S0),
            "w0": e.w0,
            "progenitors": [],
        }
        ratios = np.array(EPS_RATIOS)
        m1h = ratios * m0h
        for z1 in EPS_Z1:
            w1 = e.w(z1)
            S1 = [e.S(m) for m in m1h]
            prog = {
                "z1": z1, "growth": float(co.growthFactor(z1)), "w1": w1,
                "m1_msun": fl(m1h / h), "m1_msun_h": fl(m1h),
                "sigma1": fl(np.sqrt(S1)), "s1": fl(S1),
                "dlnsigma_dlnm1": [e.dS_dlnM(m) / (2.0 * s) for m, s in zip(m1h, S1)],
                "mass_fraction_gt_m1": [e.mass_fraction(m, w1) for m in m1h],
                "mass_fraction_gt_m1_integral": [e.integrate(m, w1, weighted=False) for m in m1h],
                "n_gt_m1": [e.n_greater(m, w1) for m in m1h],
                "dn_dlnm1": [e.dn_dlnm(m, w1) for m in m1h],
            }
            par["progenitors"].append(prog)
        par["p_zf_gt_z"] = {"z": fl(EPS_PZ_GRID), "p": [e.p_zf_greater(zz) for zz in EPS_PZ_GRID]}
        par["z_half_median"] = e.z_half()
        out["parents"].append(par)
    return out


# -------------------------------------------------------------------------------------------------

def write(name, obj):
    path = os.path.join(OUT_DIR, name)
    with open(path, "w") as fh:
        json.dump(obj, fh, indent=1, allow_nan=False)
        fh.write("\n")
    print("wrote %s (%d bytes)" % (path, os.path.getsize(path)))


def main():
    cosmology.setCosmology("planck18", persistence="")  # make sure nothing is read from a cache

    co_chk = colossus_cosmo("planck18", relspecies=True, interpolation=False)
    print("hiacc sigma self-check (two resolutions), max rel diff: %.3e" % hiacc_selfcheck(co_chk))

    bg = make_background()
    write("background.json", bg)
    p18 = bg["cosmologies"]["planck18"]["variants"]["rad"]
    print("planck18 rad: age(0) = %.6f Gyr (colossus), %.6f Gyr (astropy)"
          % (p18["age_gyr"][0], p18["age_gyr_astropy"][0]))
    print("planck18 rad: Or0 = %.6e, Ode0 = %.10f" % (p18["colossus_params"]["Or0"],
                                                      p18["colossus_params"]["Ode0"]))

    lin = make_linear()
    write("linear.json", lin)
    for name in FLAT_NAMES:
        c = lin["cosmologies"][name]
        print("%-9s sigma(8 Mpc/h) colossus %.10f hiacc %.10f input %.4f; max|sigma_col/hiacc-1| %.2e"
              % (name, c["sigma8_check"]["sigma_colossus"], c["sigma8_check"]["sigma_hiacc"],
                 c["sigma8_check"]["sigma8_input"],
                 c["sigma"]["max_rel_diff_sigma_colossus_vs_hiacc"]))
    cosmology.setCurrent(colossus_cosmo("planck18", True, False))
    co = cosmology.getCurrent()
    print("planck18 sigma(M=1e12 Msun/h, z=0) colossus = %.6f"
          % co.sigma(peaks.lagrangianR(1e12), 0.0))

    eps = make_eps()
    write("eps.json", eps)
    for par in eps["parents"]:
        i1 = eps["z1"].index(1.0)
        prog = par["progenitors"][i1]
        print("%s: z_half median = %.5f" % (par["label"], par["z_half_median"]))
        for r, fmf, fint, n in zip(eps["mass_ratio"], prog["mass_fraction_gt_m1"],
                                   prog["mass_fraction_gt_m1_integral"], prog["n_gt_m1"]):
            print("   z1=1  M1/M0=%-7g  F(>M1)=%.6f (integral %.6f)  N(>M1)=%.6f" % (r, fmf, fint, n))
    print("expected for 1e12 Msun/h: z_half ~ 0.872, F(>0.1 M0, z1=1) ~ 0.5780, N(>0.01 M0, z1=1) ~ 6.587")
    return 0


if __name__ == "__main__":
    sys.exit(main())
