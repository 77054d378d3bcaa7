"""Reference concentrations beyond the calibrated range of the c(M, z) fits retinue uses
(tests/validation/val_halo.rs, `val_concentration_beyond_the_fits_range`).

Dutton & Maccio 2014 fitted 0 < z < 5; retinue evaluates it at min(z, 5) (Duffy et al. 2008:
min(z, 2)). This file holds what two simulation-calibrated models of colossus give at higher
redshift for the masses of haloes that fall into subhaloes' parents early, as an outside check
that the held value is the right size (and that the extrapolated fit is not):

* colossus 1.4.0 `concentration.concentration(M, "vir", z, model=...)` with model "diemer19"
  (Diemer & Joyce 2019) and "ludlow16" (Ludlow et al. 2016), masses in Msun/h, c_vir
  (colossus's Bryan & Norman 1998 virial definition), on the grid M_MSUN_H x Z.

Cosmology: colossus "planck18" (retinue's `planck18` preset has the same parameters; see
make_halo_fixtures.py); interpolation on (colossus computes the derivative of sigma(R) that
diemer19 needs only from its interpolation tables).

Run from the repo root: python tests/reference/scripts/make_concentration_highz_fixtures.py
(colossus, scipy, numpy as pinned in tests/reference/requirements.txt; ~5 s); writes
tests/reference/concentration_highz.json.
"""

import datetime
import json
import os
import warnings

import numpy as np
import scipy

import colossus
from colossus.cosmology import cosmology
from colossus.halo import concentration

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(os.path.dirname(HERE), "concentration_highz.json")
M_MSUN_H = [1e7, 1e8, 1e9, 1e10]
Z = [6.0, 8.0, 10.0, 12.0, 15.0]
MODELS = ["diemer19", "ludlow16"]


def main():
    from colossus import version

    co = cosmology.setCosmology("planck18", params={"persistence": ""})
    cosmology.setCurrent(co)
    m = np.array(M_MSUN_H)
    models = {}
    for model in MODELS:
        rows = []
        for z in Z:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                c = concentration.concentration(m, "vir", z, model=model)
            rows.append({"z": z, "c_vir": [float(v) for v in np.atleast_1d(c)]})
        models[model] = rows
    out = {
        "provenance": {
            "script": "tests/reference/scripts/make_concentration_highz_fixtures.py",
            "libraries": {"colossus": version.__version__, "numpy": np.__version__,
                          "scipy": scipy.__version__},
            "generated": datetime.date.today().isoformat(),
            "notes": "concentration.concentration(M_msun_h, 'vir', z, model=model); "
                     "cosmology planck18 (interpolation on: diemer19 needs the derivative of sigma)",
        },
        "mass_msun_h": M_MSUN_H,
        "models": models,
    }
    with open(OUT, "w") as fh:
        json.dump(out, fh, indent=1, allow_nan=False)
        fh.write("\n")
    print("wrote", OUT)


if __name__ == "__main__":
    main()
