"""Reference values for the Benson 2005 distribution of infall velocities (MNRAS 358, 551),
used by tests/validation/val_orbits.rs (`val_benson05_infall_sampler_vs_scipy`).

The joint density of the radial and tangential speeds, in units of the host's virial speed:
  f(v_r, v_t) = a1 v_t exp[-a2 (v_t - a9)^2 - b1(v_t) (v_r - b2(v_t))^2],
  b1 = a3 exp[-a4 (v_t - a5)^2],  b2 = a6 exp[-a7 (v_t - a8)^2],
  (a1 ... a9) = (3.90, 2.49, 10.2, 0.684, 0.354, 1.08, 0.510, 0.206, 0.315)
as given in the project's physics reference sheet (section 8; recalled, not read from the
paper). The first value written is the check on them: the quoted a1 should normalise the
density over 0 < v_r, v_t < 3.

Written: the normalisation (scipy dblquad), the density's maximum (grid + Nelder-Mead), the
means of v_r, v_t and |v| (dblquad), the 16/50/84% quantiles of the marginal distributions of
v_r, v_t and u = |v| (brentq on cumulative integrals), and the circularity quantiles in a static
NFW host of concentration 10 (units R_vir = V_vir = 1; start at R_vir; circularity
L / L_circ(E); the density summed on a 2000 x 2000 grid of midpoints).

Run from the repo root with the pinned versions of tests/reference/requirements.txt:
  python tests/reference/scripts/make_infall_fixtures.py
writes tests/reference/infall.json.
"""

import datetime
import json
import math

import numpy as np
import scipy
from scipy import integrate, optimize

A = (3.90, 2.49, 10.2, 0.684, 0.354, 1.08, 0.510, 0.206, 0.315)
VMAX = 3.0


def density(vr, vt):
    a1, a2, a3, a4, a5, a6, a7, a8, a9 = A
    b1 = a3 * math.exp(-a4 * (vt - a5) ** 2)
    b2 = a6 * math.exp(-a7 * (vt - a8) ** 2)
    return a1 * vt * math.exp(-a2 * (vt - a9) ** 2 - b1 * (vr - b2) ** 2)


OPTS = dict(epsabs=1e-11, epsrel=1e-10)


def box_integral(g, vr_hi=VMAX, vt_hi=VMAX):
    # dblquad integrates func(y, x): x = v_t outer, y = v_r inner
    return integrate.dblquad(lambda vr, vt: g(vr, vt) * density(vr, vt), 0.0, vt_hi,
                             0.0, vr_hi, **OPTS)[0]


def quantiles(cdf, total):
    return [optimize.brentq(lambda x: cdf(x) / total - p, 1e-6, VMAX * 1.5, xtol=1e-12)
            for p in (0.16, 0.5, 0.84)]


# static NFW host, c = 10, R_vir = V_vir = 1 (G M_vir = 1)
C = 10.0


def mu(x):
    return math.log1p(x) - x / (1.0 + x)


def phi(r):
    return -math.log1p(C * r) / (r * mu(C))


def m_in(r):
    return mu(C * r) / mu(C)


def circularity(vr, vt):
    e = phi(1.0) + 0.5 * (vr * vr + vt * vt)
    if e >= 0.0:
        return math.inf  # unbound: no circular orbit of that energy
    f = lambda r: phi(r) + 0.5 * m_in(r) / r - e
    if f(1e9) <= 0.0:
        return math.inf  # bound only beyond 1e9 R_vir: counted with the unbound
    rc = optimize.brentq(f, 1e-8, 1e9, xtol=1e-14)
    return vt / math.sqrt(m_in(rc) * rc)


def main():
    norm = box_integral(lambda vr, vt: 1.0)
    res = optimize.minimize(lambda p: -density(p[0], p[1]), [0.98, 0.63], method="Nelder-Mead",
                            options=dict(xatol=1e-12, fatol=1e-14))
    fmax = -res.fun
    mean_vr = box_integral(lambda vr, vt: vr) / norm
    mean_vt = box_integral(lambda vr, vt: vt) / norm
    mean_u = box_integral(lambda vr, vt: math.hypot(vr, vt)) / norm
    q_vr = quantiles(lambda x: box_integral(lambda vr, vt: 1.0, vr_hi=min(x, VMAX)), norm)
    q_vt = quantiles(lambda x: box_integral(lambda vr, vt: 1.0, vt_hi=min(x, VMAX)), norm)
    # |v| in polar coordinates (v_r = u cos t, v_t = u sin t); the box's corners beyond
    # u = 3 hold a negligible weight (the density there is below 1e-9 of its peak)
    q_u = quantiles(lambda x: integrate.dblquad(
        lambda t, uu: uu * density(uu * math.cos(t), uu * math.sin(t)), 0.0, x,
        0.0, math.pi / 2, **OPTS)[0], norm)
    # circularity: the distribution is summed on a fine grid (an indicator would make the
    # adaptive quadrature slow); 2000^2 midpoints, error of the quantiles ~1e-3 or less
    n = 2000
    g = (np.arange(n) + 0.5) * VMAX / n
    w = np.array([[density(vr, vt) for vt in g] for vr in g]) * (VMAX / n) ** 2
    eps = np.array([[circularity(vr, vt) for vt in g] for vr in g])
    order = np.argsort(eps.ravel())
    cum = np.cumsum(w.ravel()[order]) / w.sum()
    q_eps = [float(eps.ravel()[order][np.searchsorted(cum, p)]) for p in (0.16, 0.5, 0.84)]
    out = {
        "source": "Benson 2005 (MNRAS 358, 551) density with the coefficients of the physics "
                  "reference sheet, section 8 (recalled)",
        "generated": datetime.date.today().isoformat(),
        "versions": {"scipy": scipy.__version__, "numpy": np.__version__},
        "coefficients": list(A),
        "normalisation": norm,
        "max_density": fmax,
        "argmax_vr_vt": [float(res.x[0]), float(res.x[1])],
        "mean": {"v_r": mean_vr, "v_t": mean_vt, "u": mean_u},
        "quantiles_16_50_84": {"v_r": q_vr, "v_t": q_vt, "u": q_u,
                               "circularity_nfw_c10": q_eps},
    }
    with open("tests/reference/infall.json", "w") as fh:
        json.dump(out, fh, indent=1)
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
