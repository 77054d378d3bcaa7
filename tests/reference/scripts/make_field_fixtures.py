"""Reference values for the field count around a host (src/stats/backsplash.rs): the linear
matter correlation function and the linear halo bias, from colossus 1.4.0 (versions pinned in
tests/reference/requirements.txt).

  * xi_lin(R, z = 0): co.correlationFunction(R_h, 0.0) with R_h = R h (Mpc/h) for the
    cosmologies planck18 and wmap9 of linear.json (same construction: relspecies=True,
    interpolation=False, power spectrum 'eisenstein98');
  * bias: colossus.lss.bias.haloBias(M h, z, '200m', model='tinker10') (Tinker et al. 2010,
    eq. 6 and Table 2) at M = 1e8 ... 1e13 Msun and z = 0, 1, together with the peak height
    colossus uses (colossus.lss.peaks.peakHeight(M h, z)), so that the Rust check can
    evaluate the formula at the same nu (our sigma(M) and colossus's differ by ~1e-4).

Run from the repo root: python tests/reference/scripts/make_field_fixtures.py; writes
tests/reference/field.json.
"""

import json
import os
import sys

import numpy as np
from colossus.lss import bias, peaks

sys.path.insert(0, os.path.dirname(__file__))
import make_fixtures as mf  # noqa: E402  (the cosmology construction of linear.json)

mf.SCRIPT = "tests/reference/scripts/make_field_fixtures.py"

R_MPC = [0.1, 0.2, 0.3, 0.5, 0.75, 1.0, 2.0, 5.0, 10.0, 20.0]
M_MSUN = [1e8, 1e9, 1e10, 1e11, 1e12, 1e13]
Z = [0.0, 1.0]


def main():
    out = {
        "provenance": mf.provenance(
            "xi_lin from co.correlationFunction(R*h, 0.0) (R in Mpc, no h); bias from "
            "bias.haloBias(M*h, z, '200m', model='tinker10') with nu from "
            "peaks.peakHeight(M*h, z) (colossus constant delta_c = 1.68647)"),
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
        out["cosmologies"][name] = entry
    mf.write("field.json", out)


if __name__ == "__main__":
    main()
