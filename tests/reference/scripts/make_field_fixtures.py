"""Reference values for the field count around a host (src/stats/backsplash.rs): the linear
matter correlation function and the linear halo bias, from colossus 1.4.0 (versions pinned in
tests/reference/requirements.txt).

  * xi_lin(R, z = 0): co.correlationFunction(R_h, 0.0) with R_h = R h (Mpc/h) for the
    cosmologies planck18 and wmap9 of linear.json (same construction: relspecies=True,
    interpolation=False, power spectrum 'eisenstein98');
  * bias: colossus.lss.bias.haloBias(M h, z, '200m', model='tinker10') (Tinker et al. 2010,
    eq. 6 and Table 2) at M = 1e8 ... 1e13 Msun and z = 0, 1, together with the peak height
    colossus uses (colossus.lss.peaks.peakHeight(M h, z)), so that the Rust check can
    evaluate the formula at the same nu (our sigma(M) and colossus's differ by ~1e-4);
  * the Hayashi & White 2008 (MNRAS 388, 2) host-matter correlation of the default field
    model, xi_hm(r) = max(xi_1h, xi_2h), built from colossus pieces (planck18 only): for
    hosts of virial mass M = 1.2e12 and 3e12 Msun at z = 0, c_vir from
    concentration.concentration(M h, 'vir', 0, model='dutton14'), R_vir from
    mass_so.M_to_R(M h, 0, 'vir'), xi_1h = profile_nfw.NFWProfile(M=M h, c=c_vir, z=0,
    mdef='vir').density(r h) / co.rho_m(0) - 1 (both in Msun h^2/kpc^3), xi_2h =
    haloBias(M h, 0, '200m', model='tinker10') * co.correlationFunction(r h / 1000, 0), at
    r = 1, 1.25, 1.5, 2, 3, 5, 10 R_vir.

Run from the repo root: python tests/reference/scripts/make_field_fixtures.py; writes
tests/reference/field.json.
"""

import json
import os
import sys

import numpy as np
from colossus.halo import concentration, mass_so, profile_nfw
from colossus.lss import bias, peaks

sys.path.insert(0, os.path.dirname(__file__))
import make_fixtures as mf  # noqa: E402  (the cosmology construction of linear.json)

mf.SCRIPT = "tests/reference/scripts/make_field_fixtures.py"

HOST_M_MSUN = [1.2e12, 3e12]
HOST_X = [1.0, 1.25, 1.5, 2.0, 3.0, 5.0, 10.0]
R_MPC = [0.1, 0.2, 0.3, 0.5, 0.75, 1.0, 2.0, 5.0, 10.0, 20.0]
M_MSUN = [1e8, 1e9, 1e10, 1e11, 1e12, 1e13]
Z = [0.0, 1.0]


def hayashi_white08(co):
    h = co.h
    rho_m = co.rho_m(0.0)  # Msun h^2 / kpc^3
    hosts = []
    for m in HOST_M_MSUN:
        c = float(concentration.concentration(m * h, "vir", 0.0, model="dutton14"))
        r_vir_kpc_h = float(mass_so.M_to_R(m * h, 0.0, "vir"))
        prof = profile_nfw.NFWProfile(M=m * h, c=c, z=0.0, mdef="vir")
        b = float(bias.haloBias(m * h, 0.0, "200m", model="tinker10"))
        rows = []
        for x in HOST_X:
            r_kpc_h = x * r_vir_kpc_h
            one = float(prof.density(r_kpc_h)) / rho_m - 1.0
            xi = float(co.correlationFunction(r_kpc_h / 1000.0, 0.0))
            rows.append({
                "r_over_rvir": x,
                "r_mpc": r_kpc_h / h / 1000.0,
                "xi_1h": one,
                "xi_lin": xi,
                "xi_2h": b * xi,
                "xi_hm": max(one, b * xi),
            })
        hosts.append({
            "m_vir_msun": m,
            "c_vir_dutton14": c,
            "r_vir_kpc": r_vir_kpc_h / h,
            "b_tinker10": b,
            "radii": rows,
        })
    return hosts


def main():
    out = {
        "provenance": mf.provenance(
            "xi_lin from co.correlationFunction(R*h, 0.0) (R in Mpc, no h); bias from "
            "bias.haloBias(M*h, z, '200m', model='tinker10') with nu from "
            "peaks.peakHeight(M*h, z) (colossus constant delta_c = 1.68647); hayashi_white08: "
            "xi_1h = NFWProfile(M=M*h, c=dutton14 c_vir, z=0, mdef='vir').density(r*h)/co.rho_m(0) "
            "- 1, xi_2h = haloBias(M*h, 0, '200m', 'tinker10') * co.correlationFunction(r*h, 0), "
            "xi_hm = max (r in Mpc, no h)"),
        "cosmologies": {},
    }
    for name in ["planck18", "wmap9"]:
        co = mf.colossus_cosmo(name, relspecies=True, interpolation=False)
        h = co.h
        xi = [float(co.correlationFunction(r * h, 0.0)) for r in R_MPC]
        entry = {"r_mpc": R_MPC, "xi_lin": xi, "bias": []}
        for z in Z:
            for m in M_MSUN:
                entry["bias"].append({
                    "m_msun": m, "z": z,
                    "nu": float(peaks.peakHeight(m * h, z)),
                    "b_tinker10": float(bias.haloBias(m * h, z, "200m", model="tinker10")),
                })
        if name == "planck18":
            entry["hayashi_white08"] = hayashi_white08(co)
        out["cosmologies"][name] = entry
    mf.write("field.json", out)


if __name__ == "__main__":
    main()
