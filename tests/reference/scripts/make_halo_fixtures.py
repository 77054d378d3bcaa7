#!/usr/bin/env python3
"""Generate tests/reference/halo.json (spherical-overdensity halo quantities) with colossus.

Run from the repository root:

    python tests/reference/scripts/make_halo_fixtures.py

Library versions (pinned in tests/reference/requirements.txt; python 3.12):
    colossus 1.4.0, scipy 1.18.1, numpy 2.5.5   (astropy is not used by this script)

Cosmology: one colossus object, planck18 with its preset parameters (relspecies=True, Tcmb0=2.7255,
Neff=3.046 are the colossus defaults), built as
    cosmology.setCosmology('planck18', params={'interpolation': False, 'persistence': ''})
(persistence='' only switches off colossus' on-disk cache; it does not change any number).

Units.  colossus works in Msun/h for masses, physical kpc/h for halo radii and
Msun h^2 / kpc^3 (physical) for densities.  Every quantity is stored in those units (keys ending
in _msun_h, _kpc_h, _msun_h2_kpc3) and converted to physical units without h (keys ending in
_msun, _kpc, _msun_kpc3):  M = M_h / h,  R = R_h / h,  rho = rho_h * h^2.  Velocities are in
km/s (h-independent).  Concentrations are dimensionless.

halo.json, calls (z always a python float):
  delta          for z in [0, 0.5, 1, 2, 4]:
                     halo.mass_so.deltaVir(z)
                     halo.mass_so.densityThreshold(z, mdef), mdef in vir, 200c, 200m, 500c
                     co.rho_c(z), co.rho_m(z), co.Om(z)                      (context)
  radii          halo.mass_so.M_to_R(M_h, z, mdef) for M_h in [1e8, 1e10, 1e12, 1e14] Msun/h,
                     z in [0, 1, 2], mdef in vir, 200c, 200m   (one call per (z, mdef), M array)
  conversions    halo.mass_defs.changeMassDefinition(M_h, c, z, mdef_in, mdef_out, profile='nfw')
                     M_h in [1e10, 1e12, 1e14] Msun/h, c in [4, 7, 10, 15], z in [0, 1, 2],
                     mdef_in in [200c, vir], mdef_out in [vir, 200c, 200m, 500c] (mdef_in != mdef_out);
                     one scalar call per (M, c).  colossus solves for the new x = R/rs with an
                     InterpolatedUnivariateSpline table (its docstring: accurate to ~1e-7), so the
                     *_exact keys (NOT colossus) re-solve rhos mu(x) 3/x^3 = densityThreshold(z, mdef_out)
                     with scipy brentq (xtol=1e-15, rtol=1e-15) from the same
                     NFWProfile.nativeParameters(M_h, c, z, mdef_in).
  concentration  halo.concentration.concentration(M_h_array, mdef, z, model=model, range_return=True)
                     model duffy08: mdef 200c, vir, 200m; model dutton14: mdef 200c, vir
                     (all native mass definitions of the models: no mass conversion inside colossus);
                     M_h in [1e8 .. 1e14] Msun/h (7 decades), z in [0, 0.5, 1, 2, 3].
                     The returned validity mask is stored as `valid`.  The same call with
                     range_return=False is made too (values asserted identical) to record the
                     warnings colossus emits (`warnings`).
  nfw            halo.profile_nfw.NFWProfile(M=M_h, c=c, z=z, mdef=mdef) for
                     (M_h, c, z, mdef) in (1e12, 10, 0, 200c), (1e12, 5, 0, vir), (1e10, 15, 1, vir),
                     (1e14, 4, 0, 200c):
                     prof.par['rhos'], prof.par['rs'], prof.Vmax() -> (Vmax km/s, Rmax kpc/h),
                     prof.circularVelocity(r_h), prof.enclosedMass(r_h), prof.density(r_h)
                     at r = [0.1, 1, 10, 50, 100, 300] physical kpc (r_h = r * h);
                     mass_so.M_to_R(M_h, z, mdef) for R_delta.  colossus has no NFW potential
                     function, so no potential is stored.  colossus' NFW Vmax uses the truncated
                     constant Rmax = 2.16258 rs; x_max (NOT colossus) is the scipy brentq root of
                     x^2/(1+x)^2 = ln(1+x) - x/(1+x) and vmax_kms_at_xmax = circularVelocity(x_max rs).
                     colossus computes mu(x) = log(1+x) - x/(1+x) directly (cancellation at small x);
                     menc_*_exact, vcirc_kms_exact (NOT colossus) use a cancellation-free mu(x)
                     with the same rhos, rs and G.
"""

import datetime
import json
import math
import os
import sys
import warnings

import numpy as np
import scipy
import scipy.optimize

import colossus
from colossus.cosmology import cosmology
from colossus.halo import mass_so, mass_defs, concentration, profile_nfw
from colossus.utils import constants

HERE = os.path.dirname(os.path.abspath(__file__))
OUT_DIR = os.path.dirname(HERE)  # tests/reference
SCRIPT = "tests/reference/scripts/make_halo_fixtures.py"

Z_DELTA = [0.0, 0.5, 1.0, 2.0, 4.0]
MDEF_DELTA = ["vir", "200c", "200m", "500c"]

M_RADII = [1e8, 1e10, 1e12, 1e14]  # Msun/h
Z_RADII = [0.0, 1.0, 2.0]
MDEF_RADII = ["vir", "200c", "200m"]

M_CONV = [1e10, 1e12, 1e14]  # Msun/h
C_CONV = [4.0, 7.0, 10.0, 15.0]
Z_CONV = [0.0, 1.0, 2.0]
MDEF_CONV_IN = ["200c", "vir"]
MDEF_CONV_OUT = ["vir", "200c", "200m", "500c"]

M_CONC = [1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14]  # Msun/h
Z_CONC = [0.0, 0.5, 1.0, 2.0, 3.0]
CONC_MODELS = [("duffy08", ["200c", "vir", "200m"]), ("dutton14", ["200c", "vir"])]

NFW_CASES = [(1e12, 10.0, 0.0, "200c"), (1e12, 5.0, 0.0, "vir"), (1e10, 15.0, 1.0, "vir"),
             (1e14, 4.0, 0.0, "200c")]  # (M Msun/h, c, z, mdef)
R_NFW_KPC = [0.1, 1.0, 10.0, 50.0, 100.0, 300.0]  # physical kpc
COLOSSUS_NFW_XMAX = 2.16258  # hard-coded in colossus.halo.profile_nfw.NFWProfile.Vmax


def _colossus_version():
    try:
        from colossus import version
        return version.__version__
    except Exception:  # pragma: no cover
        return getattr(colossus, "__version__", None)


LIBRARIES = {"colossus": _colossus_version(), "scipy": scipy.__version__, "numpy": np.__version__}
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


def bl(x):
    """numpy bool scalar/array -> python bool / list of bools."""
    if isinstance(x, (list, tuple, np.ndarray)):
        return [bool(v) for v in np.atleast_1d(x)]
    return bool(x)


def colossus_params(co):
    return {
        "h": co.h, "H0": co.H0, "Om0": co.Om0, "Ob0": co.Ob0, "Ode0": co.Ode0, "Ok0": co.Ok0,
        "Or0": co.Or0, "Ogamma0": co.Ogamma0, "Onu0": co.Onu0, "sigma8": co.sigma8, "ns": co.ns,
        "flat": bool(co.flat), "de_model": co.de_model, "w0": float(co.w0),
        "relspecies": bool(co.relspecies), "Tcmb0": co.Tcmb0, "Neff": co.Neff,
        "interpolation": bool(co.interpolation),
    }


def nfw_mu(x):
    """mu(x) = ln(1+x) - x/(1+x), without cancellation at small x (series below x = 0.1)."""
    if x < 0.1:
        # sum_{n>=2} (-1)^n (n-1)/n x^n; 40 terms -> truncation < 0.1^41
        return math.fsum((-1) ** n * (n - 1) / n * x ** n for n in range(2, 42))
    return math.log1p(x) - x / (1.0 + x)


# -------------------------------------------------------------------------------------------------

def make_delta(co):
    h = co.h
    z = np.array(Z_DELTA)
    rho_c = np.array([co.rho_c(zz) for zz in Z_DELTA])
    rho_m = np.array([co.rho_m(zz) for zz in Z_DELTA])
    out = {
        "z": fl(z),
        "delta_vir_crit": fl([mass_so.deltaVir(zz) for zz in Z_DELTA]),
        "om": fl([co.Om(zz) for zz in Z_DELTA]),
        "rho_c_msun_h2_kpc3": fl(rho_c), "rho_c_msun_kpc3": fl(rho_c * h ** 2),
        "rho_m_msun_h2_kpc3": fl(rho_m), "rho_m_msun_kpc3": fl(rho_m * h ** 2),
        "threshold": {},
    }
    for mdef in MDEF_DELTA:
        rho = np.array([mass_so.densityThreshold(zz, mdef) for zz in Z_DELTA])
        out["threshold"][mdef] = {
            "rho_msun_h2_kpc3": fl(rho), "rho_msun_kpc3": fl(rho * h ** 2),
            "delta_crit": fl(rho / rho_c), "delta_mean": fl(rho / rho_m),
        }
    return out


def make_radii(co):
    h = co.h
    m = np.array(M_RADII)
    out = {"mass_msun_h": fl(m), "mass_msun": fl(m / h), "mdefs": list(MDEF_RADII), "by_z": []}
    for zz in Z_RADII:
        blk = {"z": zz, "by_mdef": {}}
        for mdef in MDEF_RADII:
            r = np.asarray(mass_so.M_to_R(m, zz, mdef))
            blk["by_mdef"][mdef] = {"radius_kpc_h": fl(r), "radius_kpc": fl(r / h)}
        out["by_z"].append(blk)
    return out


def exact_change(m_h, c, z, mdef_in, mdef_out):
    """Same NFW mass-definition change as colossus, with a tight brentq root instead of a table."""
    rhos, rs = profile_nfw.NFWProfile.nativeParameters(m_h, c, z, mdef_in)
    rhos, rs = float(rhos), float(rs)
    thr = float(mass_so.densityThreshold(z, mdef_out))
    f = lambda x: rhos * nfw_mu(x) * 3.0 / x ** 3 / thr - 1.0
    x = scipy.optimize.brentq(f, 1e-3, 1e3, xtol=1e-15, rtol=1e-15, maxiter=500)
    r = rs * x
    m = float(mass_so.R_to_M(r, z, mdef_out))
    return m, r, x


def make_conversions(co):
    h = co.h
    out = {"order": "each block: arrays over the (mass, c) grid, mass outer, c inner "
                    "(index = i_mass * 4 + i_c)",
           "mass_grid_msun_h": fl(M_CONV), "mass_grid_msun": fl(np.array(M_CONV) / h),
           "c_grid": fl(C_CONV), "blocks": []}
    worst_c, worst_m = 0.0, 0.0
    for zz in Z_CONV:
        for mdef_in in MDEF_CONV_IN:
            for mdef_out in MDEF_CONV_OUT:
                if mdef_out == mdef_in:
                    continue
                mi, ci, ri, mo, ro, co_, mo_x, ro_x, co_x = ([] for _ in range(9))
                for m in M_CONV:
                    for c in C_CONV:
                        Mn, Rn, cn = mass_defs.changeMassDefinition(m, c, zz, mdef_in, mdef_out,
                                                                    profile="nfw")
                        me, re, ce = exact_change(m, c, zz, mdef_in, mdef_out)
                        mi.append(m)
                        ci.append(c)
                        ri.append(float(mass_so.M_to_R(m, zz, mdef_in)))
                        mo.append(float(Mn))
                        ro.append(float(Rn))
                        co_.append(float(cn))
                        mo_x.append(me)
                        ro_x.append(re)
                        co_x.append(ce)
                mi, ri, mo, ro, mo_x, ro_x = map(np.array, (mi, ri, mo, ro, mo_x, ro_x))
                worst_c = max(worst_c, float(np.max(np.abs(np.array(co_) / np.array(co_x) - 1))))
                worst_m = max(worst_m, float(np.max(np.abs(mo / mo_x - 1))))
                out["blocks"].append({
                    "z": zz, "mdef_in": mdef_in, "mdef_out": mdef_out,
                    "mass_in_msun_h": fl(mi), "mass_in_msun": fl(mi / h), "c_in": fl(ci),
                    "radius_in_kpc_h": fl(ri), "radius_in_kpc": fl(ri / h),
                    "mass_out_msun_h": fl(mo), "mass_out_msun": fl(mo / h),
                    "radius_out_kpc_h": fl(ro), "radius_out_kpc": fl(ro / h),
                    "c_out": fl(co_),
                    "mass_out_msun_h_exact": fl(mo_x), "mass_out_msun_exact": fl(mo_x / h),
                    "radius_out_kpc_h_exact": fl(ro_x), "radius_out_kpc_exact": fl(ro_x / h),
                    "c_out_exact": fl(co_x),
                })
    out["max_rel_diff_c_out_colossus_vs_exact"] = worst_c
    out["max_rel_diff_mass_out_colossus_vs_exact"] = worst_m
    return out


def make_concentration(co):
    h = co.h
    m = np.array(M_CONC)
    out = {"mass_msun_h": fl(m), "mass_msun": fl(m / h), "z": fl(Z_CONC), "models": {}}
    for model, mdefs in CONC_MODELS:
        mod = {}
        for mdef in mdefs:
            blocks = []
            for zz in Z_CONC:
                c, mask = concentration.concentration(m, mdef, zz, model=model, range_return=True)
                with warnings.catch_warnings(record=True) as wl:
                    warnings.simplefilter("always")
                    c2 = concentration.concentration(m, mdef, zz, model=model)
                assert np.array_equal(np.asarray(c), np.asarray(c2)), (model, mdef, zz)
                blocks.append({"z": zz, "c": fl(np.asarray(c)), "valid": bl(np.asarray(mask)),
                               "warnings": sorted(set(str(w.message) for w in wl))})
            mod[mdef] = blocks
        out["models"][model] = mod
    return out


def make_nfw(co):
    h = co.h
    x_max = scipy.optimize.brentq(lambda x: x * x / (1.0 + x) ** 2 - nfw_mu(x), 1.0, 5.0,
                                  xtol=1e-15, rtol=1e-15, maxiter=500)
    r_kpc = np.array(R_NFW_KPC)
    r_h = r_kpc * h
    out = {
        "G_kpc_km2_s2_msun": constants.G,
        "x_max": x_max, "mu_xmax_over_xmax": nfw_mu(x_max) / x_max,
        "x_max_colossus": COLOSSUS_NFW_XMAX,
        "r_kpc": fl(r_kpc), "r_kpc_h": fl(r_h),
        "profiles": [],
    }
    worst = 0.0
    for m, c, zz, mdef in NFW_CASES:
        prof = profile_nfw.NFWProfile(M=m, c=c, z=zz, mdef=mdef)
        rhos, rs = float(prof.par["rhos"]), float(prof.par["rs"])
        vmax, rmax = prof.Vmax()
        vmax, rmax = float(vmax), float(rmax)
        rdelta = float(mass_so.M_to_R(m, zz, mdef))
        vc = np.asarray(prof.circularVelocity(r_h))
        menc = np.asarray(prof.enclosedMass(r_h))
        rho = np.asarray(prof.density(r_h))
        menc_x = np.array([4.0 * math.pi * rhos * rs ** 3 * nfw_mu(rr / rs) for rr in r_h])
        vc_x = np.sqrt(constants.G * menc_x / r_h)
        worst = max(worst, float(np.max(np.abs(menc / menc_x - 1.0))))
        out["profiles"].append({
            "mass_msun_h": m, "mass_msun": m / h, "c": c, "z": zz, "mdef": mdef,
            "radius_delta_kpc_h": rdelta, "radius_delta_kpc": rdelta / h,
            "mass_at_radius_delta_msun_h": float(prof.enclosedMass(rdelta)),
            "rhos_msun_h2_kpc3": rhos, "rhos_msun_kpc3": rhos * h ** 2,
            "rs_kpc_h": rs, "rs_kpc": rs / h,
            "vmax_kms": vmax, "rmax_kpc_h": rmax, "rmax_kpc": rmax / h,
            "vmax_kms_at_xmax": float(prof.circularVelocity(x_max * rs)),
            "rmax_kpc_h_at_xmax": x_max * rs, "rmax_kpc_at_xmax": x_max * rs / h,
            "vcirc_kms": fl(vc),
            "menc_msun_h": fl(menc), "menc_msun": fl(menc / h),
            "menc_msun_h_exact": fl(menc_x), "menc_msun_exact": fl(menc_x / h),
            "vcirc_kms_exact": fl(vc_x),
            "density_msun_h2_kpc3": fl(rho), "density_msun_kpc3": fl(rho * h ** 2),
        })
    out["max_rel_diff_menc_colossus_vs_exact"] = worst
    return out


NOTES = (
    "planck18 from colossus.cosmology.setCosmology('planck18', params={'interpolation': False, "
    "'persistence': ''}) (relspecies=True default; Om(z), rho_m(z) are matter only, E(z) includes "
    "radiation). Units: *_msun_h = Msun/h, *_msun = physical Msun (= /h); *_kpc_h = physical kpc/h, "
    "*_kpc = physical kpc (= /h); *_msun_h2_kpc3 = Msun h^2/kpc^3 physical, *_msun_kpc3 = Msun/kpc^3 "
    "physical (= *h^2); velocities km/s. "
    "delta: mass_so.deltaVir(z) (Bryan & Norman 1998, x = Om(z)-1, relative to critical) and "
    "mass_so.densityThreshold(z, mdef); delta_crit / delta_mean = threshold / rho_c(z) / rho_m(z). "
    "radii: mass_so.M_to_R(M_h, z, mdef) = (3 M_h / (4 pi threshold))^(1/3). "
    "conversions: mass_defs.changeMassDefinition(M_h, c, z, mdef_in, mdef_out, profile='nfw') -> "
    "(M_out Msun/h, R_out kpc/h, c_out); arrays in each block over the (mass, c) grid with mass "
    "outer and c inner; colossus finds x = R_out/rs from a spline table (~1e-7); the *_exact keys "
    "are NOT colossus output: same rhos, rs (NFWProfile.nativeParameters) and threshold, root "
    "rhos*mu(x)*3/x^3 = threshold by scipy brentq (xtol=1e-15), mu(x) = ln(1+x) - x/(1+x). "
    "concentration: concentration.concentration(M_h, mdef, z, model, range_return=True); all mdefs "
    "are native to the model (no internal conversion); c is returned even where the model is "
    "uncalibrated, `valid` is colossus' mask (duffy08: 1e11 <= M_h <= 1e15 and z <= 2; dutton14: "
    "M_h > 1e10 strictly and z <= 5; masses in Msun/h); `warnings` = messages of the same call "
    "with range_return=False. "
    "nfw: profile_nfw.NFWProfile(M=M_h, c=c, z=z, mdef=mdef); rhos, rs = prof.par; "
    "(vmax_kms, rmax_kpc_h) = prof.Vmax(), which uses Rmax = 2.16258 rs (x_max_colossus); "
    "vmax_kms_at_xmax / rmax_*_at_xmax use x_max (scipy brentq root of x^2/(1+x)^2 = mu(x), "
    "xtol=1e-15; NOT colossus); mu_xmax_over_xmax = mu(x_max)/x_max. vcirc_kms = "
    "prof.circularVelocity(r_h) = sqrt(G M(<r)/r) with G = G_kpc_km2_s2_msun "
    "(colossus.utils.constants.G); menc = prof.enclosedMass(r_h) (analytic 4 pi rhos rs^3 mu(r/rs), "
    "untruncated, also beyond R_delta); density = prof.density(r_h); all at r_kpc (physical kpc), "
    "r_kpc_h = r_kpc * h. colossus evaluates mu(x) as log(1+x) - x/(1+x), which loses digits at "
    "small x (rel. error up to ~1e-10 at r = 0.1 kpc here); menc_*_exact / vcirc_kms_exact are NOT "
    "colossus output: 4 pi rhos rs^3 mu(r/rs) with the same rhos, rs and mu from log1p (series "
    "sum_{n>=2} (-1)^n (n-1)/n x^n below x = 0.1), vcirc = sqrt(G menc / r). "
    "colossus has no NFW potential function: no potential is stored.")


def write(name, obj):
    path = os.path.join(OUT_DIR, name)
    with open(path, "w") as fh:
        json.dump(obj, fh, indent=1, allow_nan=False)
        fh.write("\n")
    print("wrote %s (%d bytes)" % (path, os.path.getsize(path)))


def main():
    co = cosmology.setCosmology("planck18", params={"interpolation": False, "persistence": ""})
    cosmology.setCurrent(co)
    assert co.relspecies and not co.interpolation
    out = {
        "provenance": provenance(NOTES),
        "cosmology": "planck18",
        "colossus_params": colossus_params(co),
        "delta": make_delta(co),
        "radii": make_radii(co),
        "conversions": make_conversions(co),
        "concentration": make_concentration(co),
        "nfw": make_nfw(co),
    }
    write("halo.json", out)

    # Sanity checks against known planck18 numbers (colossus 1.4.0).
    d = out["delta"]
    r = out["radii"]["by_z"][0]["by_mdef"]["vir"]["radius_kpc_h"][2]
    blk = [b for b in out["conversions"]["blocks"]
           if b["z"] == 0.0 and b["mdef_in"] == "200c" and b["mdef_out"] == "vir"][0]
    i = M_CONV.index(1e12) * len(C_CONV) + C_CONV.index(10.0)
    cm = out["concentration"]["models"]
    i12 = M_CONC.index(1e12)
    checks = [
        ("Delta_vir(z=0)", d["delta_vir_crit"][0], 102.6543),
        ("R_vir(1e12 Msun/h, z=0) kpc/h", r, 203.1131),
        ("200c->vir M_out (1e12, c=10, z=0)", blk["mass_out_msun_h"][i], 1.15323e12),
        ("200c->vir c_out (1e12, c=10, z=0)", blk["c_out"][i], 13.0975),
        ("duffy08 200c c(1e12, z=0)", cm["duffy08"]["200c"][0]["c"][i12], 6.052),
        ("dutton14 200c c(1e12, z=0)", cm["dutton14"]["200c"][0]["c"][i12], 8.035),
    ]
    ok = True
    for name, got, want in checks:
        rel = abs(got / want - 1.0)
        good = rel < 5e-5 * (10.0 if want in (6.052, 8.035) else 1.0)
        ok &= good
        print("%-38s %.8g  expected %.8g  rel %.1e  %s" % (name, got, want, rel, "ok" if good else "MISMATCH"))
    print("conversions: max |c_out colossus/exact - 1| = %.2e, max |M_out colossus/exact - 1| = %.2e"
          % (out["conversions"]["max_rel_diff_c_out_colossus_vs_exact"],
             out["conversions"]["max_rel_diff_mass_out_colossus_vs_exact"]))
    n = out["nfw"]
    print("nfw: max |menc colossus/exact - 1| = %.2e" % out["nfw"]["max_rel_diff_menc_colossus_vs_exact"])
    print("x_max = %.15f, mu(x_max)/x_max = %.15f" % (n["x_max"], n["mu_xmax_over_xmax"]))
    for p in n["profiles"]:
        print("NFW M=%.0e c=%g z=%g %-4s rs=%.4f kpc  Vmax=%.4f km/s (at x_max %.10f)  Rmax=%.4f kpc"
              % (p["mass_msun_h"], p["c"], p["z"], p["mdef"], p["rs_kpc"], p["vmax_kms"],
                 p["vmax_kms_at_xmax"], p["rmax_kpc"]))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
