#!/usr/bin/env python3
"""Generate tests/reference/stripping_nbody.json: the bound mass of an N-body subhalo on two orbits
(A, B), of a more massive, less concentrated subhalo on orbit A (C), and of subhaloes with one of
C's two differences each on orbit A (D: c = 8; E: 1e10 Msun), in a static NFW host
(REBOUND tree code), for the check of retinue's tidal-stripping rate (`val_stripping_rate_vs_nbody`
in tests/validation/val_orbits.rs).

Run from the repository root:

    python tests/reference/scripts/make_stripping_nbody_fixtures.py            # every run, then the JSON
    python tests/reference/scripts/make_stripping_nbody_fixtures.py --run A_n20000   # one run only
    python tests/reference/scripts/make_stripping_nbody_fixtures.py --assemble       # JSON from cached runs

    python tests/reference/scripts/make_stripping_nbody_fixtures.py --add-orbits D,E  # add orbits D, E

(runs: iso_n5000, iso_n20000, A_n5000, A_n20000, B_n5000, B_n20000, C_n5000, C_n20000,
iso_C_n5000, soft_check, D_n5000, D_n20000, E_n5000, E_n20000.)

Each run is cached as an .npz file in --work (default /tmp/stripping_nbody_runs, outside the
repository); a cached run is not repeated.  N-body CPU 2611 s (44 minutes) for A and B on one
core of the machine used, 2-core and shared (each run's time is stored in the JSON: 58 and 347 s
for the isolated runs, 117-125 s per orbit at N = 5000, 860-874 s at N = 20000, 231 s for the
softening check); assembling the JSON from cached runs takes about 5 s.  Runs are single-threaded.
Setup C (added later, same machine): C_n5000 122 s, C_n20000 810 s, iso_C_n5000 54 s; 3596 s
(60 minutes) in all.
Setups D and E (added 2026-12-05 on a shared 2-core machine with Python 3.11, about four times
slower per Gyr): D_n5000 344 s, D_n20000 3256 s, E_n5000 624 s, E_n20000 3290 s.
Orbit G (added 2026-12-05 the same way, `--add-orbits G`): G_n5000 325 s, G_n20000 2302 s.
Orbit H (then, `--add-orbits H`): H_n5000 320 s, H_n20000 2481 s.

Library versions (pinned in tests/reference/requirements.txt; python 3.12):
    rebound 5.2.2, galpy 1.12.1 (cross-check of the distribution function only), scipy 1.18.1,
    numpy 2.5.5

Units: kpc, Gyr, Msun inside the N-body code (G = 4.300917270e-6 kpc (km/s)^2/Msun, retinue's
G_KPC_KMS2_PER_MSUN, times 1.022712165^2 (km/s -> kpc/Gyr, retinue's KMS_IN_KPC_PER_GYR));
velocities are stored in km/s.

The experiment
--------------
Host: a static, untruncated NFW potential (the potential retinue gives an isolated parent halo,
`evolve_in_isolated_halo`), M_vir = 1e12 Msun, c = 10, R_vir from the Bryan & Norman 1998
overdensity at z = 0 for a flat cosmology with Omega_m = 0.31 and rho_crit = 277.536627 h^2
Msun/kpc^3, h = 0.6766 (Delta_vir = 18 pi^2 + 82 x - 39 x^2, x = Omega_m - 1).  It acts on every
particle as an analytic acceleration (REBOUND `additional_forces`, numpy on a view of the particle
array).  A fixed potential has no dynamical friction, so retinue is run with friction off.

Subhalo: NFW, m_vir = 1e9 Msun, c = 15, r_vir from the same overdensity.  Inside r_vir the density
is NFW holding m_vir, as retinue assumes.  A sharp edge at r_vir has no non-negative isotropic
distribution function (the density step makes f(E) -> -infinity just above Psi(r_vir)), so beyond
r_vir the density falls off with the exponential taper of Kazantzidis, Magorrian & Moore 2004
(ApJ 601, 37): rho = rho_NFW(r_vir) (r/r_vir)^kappa exp(-(r - r_vir)/r_decay), r_decay = 0.1 r_vir,
kappa = -(1 + 3c)/(1 + c) + r_vir/r_decay (continuous logarithmic slope).  The taper holds 18% more
mass beyond r_vir (loosely bound; the host's tide at R_vir already reaches inside the subhalo's
r_vir).  Setup C: m_vir = 1e10 Msun, c = 8 (r_vir 56.81 kpc, r_s 7.10 kpc; kappa = 7.22, the
taper holds 23% more mass), the same construction, distribution function (checked > 0) and
sampling, stored per orbit in `orbits.C.subhalo` (the JSON's `setup.subhalo` is the fiducial
one).  Bound fractions are given as M_bound / m_vir (m_vir = the NFW mass inside r_vir, the mass
retinue starts from); f_bound_initial divides by the bound mass at t = 0 instead.

Distribution function: Eddington's formula for the tapered model in its own potential,
    f(E) = 1/(sqrt(8) pi^2) int_0^E (d^2 rho/dPsi^2) dPsi / sqrt(E - Psi)
(the boundary term (d rho/dPsi)_{Psi=0}/sqrt(E) vanishes), with d^2 rho/dPsi^2 from the analytic
rho', rho'' and M(<r) (scipy quad), the integral in t = sqrt(E - Psi) by Gauss-Legendre panels
split where Psi crosses Psi(r_vir) (rho'' jumps there).  f is tabulated on 800 radii and checked
to be > 0 everywhere (`df_nonnegative`).  It is not monotonic: at E = Psi(r_vir) it dips to 0.47
of its value at E = Psi(0.9 r_vir).  With r_decay = 0.05 r_vir (13% taper mass) the dip reaches
0.14, with 0.03 r_vir f turns negative; 0.1 r_vir is also, as recalled here, the value
Kazantzidis et al. used.  The isolated runs show the realisations stay in equilibrium.
The same code applied to the untruncated NFW is compared with galpy's isotropicNFWdf (the fit of
Lane et al. 2021 to the NFW Eddington DF): `eddington_check_vs_galpy`.
Sampling: radii from M(<r) (inverse CDF), isotropic directions, speeds from p(v) ~ v^2 f(Psi - v^2/2)
by a tabulated CDF (400 points in v/v_esc) per particle; the sample's centre of mass and mean
velocity are removed.  Seeds: 11 (N = 5000), 12 (N = 20000); the isolated run and the orbits at one
N start from the same realisation.

Gravity: REBOUND tree code (`gravity='tree'`, opening angle 0.5, quadrupole moments as REBOUND
builds them), Plummer softening eps = 0.05 r_s (0.088 kpc), leapfrog (drift-kick-drift) with a fixed
step of 2.5 Myr: the Plummer core's time-scale sqrt(eps/a(eps)) is 16 Myr, the circular period at
eps 94 Myr; a particle at the central escape speed (36 km/s) moves 0.09 kpc ~ eps per step, more
than the 0.5 eps per step a common criterion asks for (astro-ph/0504573, abstract): the isolated
runs and the check with half the step and softening (below) bound the effect.  The host's
time-scale r/v at the smallest pericentre (26 kpc) is 85 Myr.  Open boundary, root box
2000 kpc across centred on the host (a particle leaving it would stop the run; none did).

Resolution criteria (for the reader; the Rust test applies the particle-count rule): van den
Bosch & Ogiya 2018 (MNRAS 475, 4066) show in idealised simulations that too few particles and too
large a softening make subhaloes lose mass too fast and disrupt artificially (abstract); Chiang,
van den Bosch & Schive 2025 (arXiv:2510.26901, abstract) ask for the tidal radius to span at least
20 Plummer softening lengths in tree codes, here 1.76 kpc = r_s, i.e. roughly f_bound > 0.1 for an
NFW with c = 15.  Each orbit is run at N = 5000 and N = 20000 (same softening and step); their
difference is the N-body's own uncertainty.  Softening check: orbit B at N = 5000 again from the
same realisation with half the softening (0.025 r_s) and half the step (1.25 Myr)
(`orbits.B.softening_check`).

Setup C's numerics: softening 0.05 r_s of its own subhalo (0.355 kpc), the same 2.5 Myr step,
opening angle, box, unbinding and outputs.  The step against C's central time-scales
(`timescales`, stored as orbits.C.subhalo.step_timescales; t_core = sqrt(eps/a(eps)) with
a(eps) = G M_NFW(<eps) / eps^2, circular period 2 pi t_core, escape speed sqrt(2 Psi(0)) of the
tapered model):
t_core 33 Myr (13 steps), circular period at eps 209 Myr, escape speed 92 km/s, 0.66 eps per step,
close to the 0.5 eps criterion; the same definitions give 15 Myr, 97 Myr and 50 km/s (1.47 eps per
step) for the fiducial subhalo (the 36 km/s quoted above matches sqrt(Psi(0)), not the escape
speed), so the step is about twice as small against C's central times as against the fiducial
subhalo's.  The tidal radius spans 20 softening lengths while it exceeds 7.1 kpc = r_s, i.e.
roughly f_bound > 0.15 for c = 8.

Bound mass, every 50 Myr (stored every 100 Myr): iterative unbinding.  Start from the particles
bound at the previous output (all particles at t = 0) and, as the first centre, the present mean
position and velocity of the previous output's most bound particles (at t = 0 the centre of
mass).  Repeat (at most 100
times) until the bound set does not change: the potential of the bound set is computed in the
spherical approximation about the current centre, Phi(r) = -G m_p [n(<r)/r + sum_{r_j > r} 1/r_j]
(r floored at eps), for ALL particles (unbound particles may rebind); E = |v - v_c|^2/2 + Phi;
bound = E < 0; the centre (x_c, v_c) is the mean position and velocity of the max(32, 5%) most bound
particles of the new set.  No host potential enters the energies.  Fewer than 20 bound particles:
disrupted (n_bound = 0).

Orbits (A-F start at the host's virial radius, x = (R_vir, 0, 0), v = (v_r, v_t, 0) V_vir; G at
0.4 R_vir):
    A: (v_r, v_t) = (-0.3, 0.42) V_vir, pericentres 0.2 R_vir at t = 2.16 and 8.02 Gyr, to 8.6 Gyr
    B: (v_r, v_t) = (-0.3, 0.25) V_vir, pericentres 0.1 R_vir at t = 2.02 and 7.42 Gyr, to 8.0 Gyr
    C: orbit A's initial conditions and end time, setup C's subhalo
    D: orbit A, the fiducial mass with C's concentration (1e9 Msun, c = 8)
    E: orbit A, C's mass with the fiducial concentration (1e10 Msun, c = 15)
    G: the fiducial subhalo from an apocentre at 0.4 R_vir (105 kpc) with v_t = 0.6 V_vir, five
       pericentres at 0.125 R_vir (33 kpc; radial period 2.05 Gyr), to 10.3 Gyr (the fifth
       apocentre): a subhalo that has sunk deep into the host, where the model's loss at
       pericentres alone (none between them) is tested over many orbits (added with
       `--add-orbits G`, same versions as D and E; records with the inner masses)
    H: orbit G with D's subhalo (1e9 Msun, c = 8), to tell whether what G shows depends on the
       concentration (added with `--add-orbits H`, same versions)
(D and E change one of C's two differences from A at a time, to tell which one makes C lose its
mass faster; they were added after C with `--add-orbits D,E`, which keeps the JSON's other
records as they are and notes the versions used in provenance.additions: that machine had
Python 3.11, so scipy 1.17.1 and numpy 2.4.6 instead of the pinned 1.18.1 and 2.5.5, with the
pinned REBOUND 5.2.2 and galpy 1.12.1.)
(test-particle values from scipy `solve_ivp`, `test_particle_orbit`).  The radial period from
R_vir in this host is about 5.5 Gyr, so two pericentres take about 8 Gyr from R_vir.
(The N-body centre of C, a 1% mass ratio, does not follow the test-particle orbit after its
first pericentre: on the 100 Myr outputs its apocentre is 258 kpc at 4.8 Gyr instead of A's
275 kpc at 5.0 Gyr, its second pericentre 47 kpc at 7.5 Gyr instead of 53 kpc at 7.9 Gyr (both
N), presumably the pull of its own stripped debris, since the host is a fixed potential;
`r_kpc` holds the centre's track.)
Softening check of D (added with `--add-softening-checks D`, same versions as D and E): D's N = 5000
realisation with half the softening and half the step (run 'D_halfsoft_n5000'), as
orbits.D.softening_check, with the inner masses (the c = 8 remnant holds less inside r_s than the
model's structure; this tells whether the softening makes that).
Isolated: the same realisations without host for 3 Gyr: bound fraction and the mass inside 0.5,
1 and 2 r_s of the centre (all particles), relative to t = 0 (setup C: N = 5000 only,
`isolated.C_n5000`).
"""

import argparse
import ctypes
import datetime
import json
import math
import os
import sys
import time
import warnings

import numpy as np
import rebound
import scipy
from scipy import integrate, interpolate

import galpy
from galpy.df import isotropicNFWdf
from galpy.potential import NFWPotential

SCRIPT = "tests/reference/scripts/make_stripping_nbody_fixtures.py"
OUT = "tests/reference/stripping_nbody.json"
LIBRARIES = {"rebound": rebound.__version__, "galpy": galpy.__version__,
             "scipy": scipy.__version__, "numpy": np.__version__}
TODAY = datetime.date.today().isoformat()

# retinue's constants
G_KMS = 4.300917270e-6  # kpc (km/s)^2 / Msun
KMS = 1.022712165  # km/s in kpc/Gyr
G = G_KMS * KMS ** 2  # kpc^3 / (Msun Gyr^2)
RHO_CRIT_H2 = 277.536627  # Msun/kpc^3 per h^2

# cosmology for the virial overdensity only
H = 0.6766
OMEGA_M = 0.31
RHO_CRIT = RHO_CRIT_H2 * H * H
_X = OMEGA_M - 1.0
DELTA_VIR = 18.0 * math.pi ** 2 + 82.0 * _X - 39.0 * _X ** 2

M_HOST, C_HOST = 1.0e12, 10.0
M_SUB, C_SUB = 1.0e9, 15.0  # the fiducial subhalo (orbits A, B)
# subhaloes: key -> (m_vir, c); orbits name theirs ("fiducial" unless given)
SUBHALOS = {"fiducial": (M_SUB, C_SUB), "massive": (1.0e10, 8.0),
            # C's two differences from the fiducial subhalo one at a time (D, E)
            "low_c": (M_SUB, 8.0), "massive_c15": (1.0e10, C_SUB),
            # below the calibrated range of the concentration-dependent rate (F)
            "c5": (M_SUB, 5.0)}
R_DECAY_FRAC = 0.1

EPS_OVER_RS = 0.05
OPENING_ANGLE = 0.5
DT = 0.0025  # Gyr
OUT_EVERY = 20  # steps (50 Myr)
STORE_EVERY = 2  # outputs (100 Myr)
BOX = 2000.0  # kpc
T_ISO = 3.0
NS = {5000: 11, 20000: 12}
ORBITS = {
    "A": {"v_r": -0.3, "v_t": 0.42, "t_end": 8.6},
    "B": {"v_r": -0.3, "v_t": 0.25, "t_end": 8.0},
    "C": {"v_r": -0.3, "v_t": 0.42, "t_end": 8.6, "subhalo": "massive"},  # orbit A, the massive subhalo
    "D": {"v_r": -0.3, "v_t": 0.42, "t_end": 8.6, "subhalo": "low_c"},  # orbit A, fiducial mass, c = 8
    "E": {"v_r": -0.3, "v_t": 0.42, "t_end": 8.6, "subhalo": "massive_c15"},  # orbit A, 1e10, c = 15
    "F": {"v_r": -0.3, "v_t": 0.42, "t_end": 8.6, "subhalo": "c5"},  # orbit A, fiducial mass, c = 5
    # many pericentres: from apocentre 0.4 R_vir, the fiducial subhalo (a subhalo that has sunk)
    "G": {"r0": 0.4, "v_r": 0.0, "v_t": 0.6, "t_end": 10.3},
    # orbit G with the c = 8 subhalo (D's): whether the many-orbit retention depends on c
    "H": {"r0": 0.4, "v_r": 0.0, "v_t": 0.6, "t_end": 10.3, "subhalo": "low_c"},
}
# orbits whose records also hold the mass inside 0.5, 1, 2 r_s (added with D and E; A-C were
# assembled before, and their cached runs are gone)
INNER_MASS_ORBITS = ("D", "E", "F", "G", "H")
# isolated runs of subhaloes other than the fiducial one: key -> (subhalo, N, duration Gyr)
ISO_EXTRA = {"C": ("massive", 5000, T_ISO)}
# the softening check: orbit B at N = 5000 with half the softening and half the step
SOFT_CHECK = {"orbit": "B", "n": 5000, "eps_over_rs": 0.025, "dt": 0.00125}
# softening checks of other orbits: orbit -> N of a run with half the softening and half the step
# (same realisation), run name '<orbit>_halfsoft_n<N>'; added for D (c = 8), whose remnant's
# structure departs from the model's, with --add-softening-checks D
HALFSOFT = {"D": 5000}


def r_vir(m):
    return (3.0 * m / (4.0 * math.pi * DELTA_VIR * RHO_CRIT)) ** (1.0 / 3.0)


def mu(x):
    """ln(1+x) - x/(1+x), with its series for small x."""
    x = np.asarray(x, float)
    small = x < 1e-4
    xs = np.where(small, 1.0, x)
    return np.where(small, x * x * (0.5 - x * (2.0 / 3.0 - 0.75 * x)), np.log1p(xs) - xs / (1.0 + xs))


R_HOST = r_vir(M_HOST)
RS_HOST = R_HOST / C_HOST
MS_HOST = M_HOST / float(mu(C_HOST))
V_VIR = math.sqrt(G_KMS * M_HOST / R_HOST)  # km/s
R_SUB = r_vir(M_SUB)
RS_SUB = R_SUB / C_SUB
EPS = EPS_OVER_RS * RS_SUB


def subhalo(key):
    """(m_vir, c, r_vir, r_s, softening) of a subhalo in SUBHALOS (fiducial: M_SUB ... EPS)."""
    m, c = SUBHALOS[key]
    rv = r_vir(m)
    rs = rv / c
    return m, c, rv, rs, EPS_OVER_RS * rs


# -------------------------------------------------------------------------------------------------
# The subhalo model and its distribution function
# -------------------------------------------------------------------------------------------------

class TaperedNFW:
    """NFW inside r_vir (holding m_vir); Kazantzidis, Magorrian & Moore 2004 taper beyond (or no
    truncation at all with taper=False: the plain NFW, for the galpy cross-check)."""

    def __init__(self, m_vir, rv, c, g, r_decay_frac=R_DECAY_FRAC, taper=True):
        self.G, self.m_vir, self.r_vir, self.c, self.taper = g, m_vir, rv, c, taper
        self.r_s = rv / c
        self.m_s = m_vir / float(mu(c))
        self.rho_s = self.m_s / (4.0 * math.pi * self.r_s ** 3)
        self.r_d = r_decay_frac * rv
        self.kappa = -(1.0 + 3.0 * c) / (1.0 + c) + rv / self.r_d
        self.rho_vir = self.rho_s / (c * (1.0 + c) ** 2)
        q = dict(epsabs=0.0, epsrel=1e-12, limit=400)
        if taper:
            self.m_taper = integrate.quad(lambda r: 4 * math.pi * r * r * self._tap(r), rv, np.inf, **q)[0]
            self.i_taper = integrate.quad(lambda r: 4 * math.pi * r * self._tap(r), rv, np.inf, **q)[0]
        else:
            self.m_taper = self.i_taper = 0.0

    def _tap(self, r):
        return self.rho_vir * (r / self.r_vir) ** self.kappa * np.exp(-(r - self.r_vir) / self.r_d)

    def rho(self, r):
        r = np.asarray(r, float)
        x = r / self.r_s
        nfw = self.rho_s / (x * (1.0 + x) ** 2)
        return np.where(r <= self.r_vir, nfw, self._tap(r)) if self.taper else nfw

    def drho(self, r):
        """(d rho/dr, d^2 rho/dr^2)."""
        r = np.asarray(r, float)
        x = r / self.r_s
        nfw = self.rho_s / (x * (1.0 + x) ** 2)
        s1 = (-1.0 / x - 2.0 / (1.0 + x)) / self.r_s
        s2 = (1.0 / x ** 2 + 2.0 / (1.0 + x) ** 2) / self.r_s ** 2
        d1, d2 = nfw * s1, nfw * (s1 * s1 + s2)
        if not self.taper:
            return d1, d2
        tap = self._tap(r)
        t1 = self.kappa / r - 1.0 / self.r_d
        t2 = -self.kappa / r ** 2
        inside = r <= self.r_vir
        return np.where(inside, d1, tap * t1), np.where(inside, d2, tap * (t1 * t1 + t2))

    def mass(self, r):
        r = np.atleast_1d(np.asarray(r, float))
        if not self.taper:
            return self.m_s * mu(r / self.r_s)
        out = self.m_s * mu(np.minimum(r, self.r_vir) / self.r_s)
        for i in np.flatnonzero(r > self.r_vir):
            out[i] = self.m_vir + integrate.quad(lambda s: 4 * math.pi * s * s * self._tap(s), self.r_vir,
                                                 r[i], epsabs=0.0, epsrel=1e-12, limit=400)[0]
        return out

    def psi(self, r):
        """Relative potential -Phi > 0."""
        r = np.atleast_1d(np.asarray(r, float))
        x = r / self.r_s
        if not self.taper:
            return self.G * self.m_s * np.log1p(x) / r
        out = np.empty_like(r)
        inside = r <= self.r_vir
        xi = x[inside]
        out[inside] = self.G * (self.m_s * mu(xi) / r[inside]
                                + 4 * math.pi * self.rho_s * self.r_s ** 2 * (1 / (1 + xi) - 1 / (1 + self.c))
                                + self.i_taper)
        for i in np.flatnonzero(~inside):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # quad's round-off warnings far out, where ext ~ 0
                ext = integrate.quad(lambda s: 4 * math.pi * s * self._tap(s), r[i], np.inf,
                                     epsabs=0.0, epsrel=1e-12, limit=400)[0]
            out[i] = self.G * (self.mass(r[i])[0] / r[i] + ext)
        return out


class EddingtonDF:
    """Isotropic f(E) by Eddington's formula (module docstring), tabulated at E = Psi(r_k)."""

    def __init__(self, model, r_min, r_max, n=800, n_gl=256):
        self.m = model
        r = np.geomspace(r_min, r_max, n)
        if model.taper:
            r = np.unique(np.r_[r, model.r_vir])
        self.r = r
        self.psi_r = model.psi(r)
        self.mass_r = model.mass(r)
        lnr = np.log(r)
        self._lnr_of_lnpsi = interpolate.PchipInterpolator(np.log(self.psi_r)[::-1], lnr[::-1])
        self._lnm_of_lnr = interpolate.PchipInterpolator(lnr, np.log(self.mass_r))
        self._lnpsi_of_lnr = interpolate.PchipInterpolator(lnr, np.log(self.psi_r))
        self.gl_x, self.gl_w = np.polynomial.legendre.leggauss(n_gl)
        self.psi_vir = float(model.psi(model.r_vir)[0]) if model.taper else None
        self.f = np.array([self._f(E) for E in self.psi_r])
        self._lnf = interpolate.PchipInterpolator(lnr, np.log(np.maximum(self.f, 1e-300)))

    def r_of_psi(self, psi):
        return np.exp(self._lnr_of_lnpsi(np.log(psi)))

    def psi_of_r(self, r):
        return np.exp(self._lnpsi_of_lnr(np.log(r)))

    def d2rho_dpsi2(self, psi):
        r = self.r_of_psi(psi)
        if self.psi_vir is not None:
            # the side of the join from Psi itself (the interpolated radius may cross it)
            r = np.where(psi >= self.psi_vir, np.minimum(r, self.m.r_vir),
                         np.maximum(r, self.m.r_vir * (1 + 1e-15)))
        g = self.m.G
        mm = np.exp(self._lnm_of_lnr(np.log(r)))
        rho = self.m.rho(r)
        d1, d2 = self.m.drho(r)
        num = -(d2 * r * r + 2 * r * d1) / (g * mm) + d1 * r * r * 4 * math.pi * r * r * rho / (g * mm * mm)
        return num / (-g * mm / (r * r))

    def _panel(self, E, t0, t1):
        t = 0.5 * (t1 - t0) * self.gl_x + 0.5 * (t1 + t0)
        w = 0.5 * (t1 - t0) * self.gl_w
        psi = E - t * t
        ok = psi > self.psi_r[-1]
        return 2.0 * np.sum(w[ok] * self.d2rho_dpsi2(psi[ok]))

    def _f(self, E):
        tmax = math.sqrt(max(E - self.psi_r[-1], 0.0))
        cuts = [0.0, tmax]
        if self.psi_vir is not None and E > self.psi_vir:
            cuts.append(math.sqrt(E - self.psi_vir))
        cuts = sorted(set(cuts))
        panels = []
        for a, b in zip(cuts[:-1], cuts[1:]):
            pts = [a, b] if a > 0 else [a] + list(b * np.geomspace(1e-6, 1.0, 12))
            pts = sorted(set(pts))
            panels += list(zip(pts[:-1], pts[1:]))
        return sum(self._panel(E, a, b) for a, b in panels) / (math.sqrt(8.0) * math.pi ** 2)

    def __call__(self, E):
        E = np.asarray(E, float)
        out = np.zeros_like(E)
        ok = E > self.psi_r[-1]
        out[ok] = np.exp(self._lnf(np.log(self.r_of_psi(np.minimum(E[ok], self.psi_r[0])))))
        return out


def eddington_check_vs_galpy():
    """Our Eddington integral for the plain NFW (G = M_s = r_s = 1) against galpy's isotropicNFWdf."""
    model = TaperedNFW(float(mu(15.0)), 15.0, 15.0, 1.0, taper=False)  # M_s = 1, r_s = 1
    df = EddingtonDF(model, 1e-5, 1e5)
    gd = isotropicNFWdf(pot=NFWPotential(amp=1.0, a=1.0), rmax=np.inf)
    r = np.geomspace(1e-3, 1e3, 25)
    E = model.psi(r)
    ours = df(E)
    theirs = gd.fE(-E)
    rel = np.abs(ours / theirs - 1.0)
    return {"r_over_rs": r.tolist(), "E_over_GMs_rs": E.tolist(), "f_ours": ours.tolist(),
            "f_galpy": theirs.tolist(), "max_rel_diff": float(rel.max()),
            "notes": "plain NFW, G = M_s = r_s = 1; galpy isotropicNFWdf(pot=NFWPotential(amp=1, a=1), "
                     "rmax=inf).fE(-E) (the fit of Lane et al. 2021, not an exact integral)"}


def sample(model, df, n, rng, r_max):
    """Positions and velocities of n equal-mass particles from f(E)."""
    sel = df.r <= r_max
    r, mm = df.r[sel], df.mass_r[sel]
    keep = np.r_[True, np.diff(mm) > 1e-12 * mm[-1]]
    r, mm = r[keep], mm[keep]
    u = rng.uniform(0.0, mm[-1], n)
    rr = np.exp(interpolate.PchipInterpolator(np.log(mm), np.log(r))(np.log(np.maximum(u, mm[0]))))

    def directions(k):
        cth = rng.uniform(-1.0, 1.0, k)
        ph = rng.uniform(0.0, 2.0 * math.pi, k)
        sth = np.sqrt(1.0 - cth ** 2)
        return np.c_[sth * np.cos(ph), sth * np.sin(ph), cth]

    pos = rr[:, None] * directions(n)
    psi = df.psi_of_r(rr)
    nq = 400
    q = np.linspace(0.0, 1.0, nq + 1)
    speed = np.empty(n)
    chunk = 5000
    for s in range(0, n, chunk):
        ps = psi[s:s + chunk]
        k = len(ps)
        E = ps[:, None] * (1.0 - q[None, :] ** 2)
        p = q[None, :] ** 2 * df(E.ravel()).reshape(E.shape)
        cdf = np.concatenate([np.zeros((k, 1)), np.cumsum(0.5 * (p[:, 1:] + p[:, :-1]), axis=1)], axis=1)
        cdf /= cdf[:, -1:]
        x = rng.uniform(0.0, 1.0, k)
        j = np.clip(np.array([np.searchsorted(cdf[i], x[i]) for i in range(k)]), 1, nq)
        c0, c1 = cdf[np.arange(k), j - 1], cdf[np.arange(k), j]
        qq = q[j - 1] + (x - c0) / np.maximum(c1 - c0, 1e-300) * (q[j] - q[j - 1])
        speed[s:s + k] = qq * np.sqrt(2.0 * ps)
    vel = speed[:, None] * directions(n)
    pos -= pos.mean(axis=0)
    vel -= vel.mean(axis=0)
    return pos, vel


_MODEL = {}


def model_and_df(key="fiducial"):
    if key not in _MODEL:
        m_vir, c, rv, _, _ = subhalo(key)
        m = TaperedNFW(m_vir, rv, c, G)
        df = EddingtonDF(m, 1e-5 * m.r_s, 10.0 * rv)
        _MODEL[key] = (m, df)
    return _MODEL[key]


def timescales(key):
    """The central time-scales against which the step is chosen (module docstring)."""
    m, _ = model_and_df(key)
    _, _, _, rs, eps = subhalo(key)
    a_eps = G * float(m.mass(eps)[0]) / eps ** 2
    v_esc = math.sqrt(2.0 * float(m.psi(1e-6 * rs)[0]))  # kpc/Gyr
    return {"softening_kpc": eps, "t_core_gyr": math.sqrt(eps / a_eps),
            "circular_period_at_softening_gyr": 2.0 * math.pi * math.sqrt(eps / a_eps),
            "central_escape_speed_kms": v_esc / KMS, "escape_speed_step_over_softening": v_esc * DT / eps,
            "definitions": "t_core = sqrt(eps / a(eps)), a(eps) = G M_NFW(<eps) / eps^2; circular period "
                           "2 pi t_core; escape speed sqrt(2 Psi(0)) of the tapered model; its distance "
                           "moved in one step over eps"}


# -------------------------------------------------------------------------------------------------
# Host, unbinding, runs
# -------------------------------------------------------------------------------------------------

def host_accel(x):
    r = np.sqrt(np.sum(x * x, axis=1))
    g = -G * MS_HOST * mu(r / RS_HOST) / r ** 3
    return g[:, None] * x


def test_particle_orbit(v_r, v_t, t_end, r0=1.0):
    def rhs(t, y):
        a = host_accel(y[None, :3])[0]
        return np.r_[y[3:], a]

    y0 = [r0 * R_HOST, 0.0, 0.0, v_r * V_VIR * KMS, v_t * V_VIR * KMS, 0.0]
    s = integrate.solve_ivp(rhs, (0.0, t_end), y0, method="DOP853", rtol=1e-11, atol=1e-11,
                            dense_output=True)
    tt = np.linspace(0.0, t_end, 20001)
    rr = np.linalg.norm(s.sol(tt)[:3], axis=0)
    peri = [(float(tt[k]), float(rr[k])) for k in range(1, len(tt) - 1) if rr[k] < rr[k - 1] and rr[k] <= rr[k + 1]]
    apo = [(float(tt[k]), float(rr[k])) for k in range(1, len(tt) - 1) if rr[k] > rr[k - 1] and rr[k] >= rr[k + 1]]
    return {"t_peri_gyr": [p[0] for p in peri], "r_peri_kpc": [p[1] for p in peri],
            "t_apo_gyr": [a[0] for a in apo], "r_apo_kpc": [a[1] for a in apo],
            "method": "scipy solve_ivp DOP853, rtol = atol = 1e-11, extrema on a 20001-point grid"}


def unbind(x, v, m_p, bound, most, eps):
    """Iterative unbinding (module docstring) from the previous bound set `bound` and the previous
    most bound particles `most` (indices; their present mean position and velocity are the first
    centre). Returns (bound mask, x_c, v_c, most bound particles, iterations)."""
    xc, vc = x[most].mean(axis=0), v[most].mean(axis=0)
    n_it = 0
    for n_it in range(1, 101):
        nb = int(bound.sum())
        if nb < 20:
            return np.zeros_like(bound), xc, vc, most, n_it
        rb = np.maximum(np.sqrt(np.sum((x[bound] - xc) ** 2, axis=1)), eps)
        order = np.sort(rb)
        # sum over bound particles beyond r of 1/r_j: suffix sums of the sorted inverse radii
        inv = 1.0 / order
        suffix = np.r_[np.cumsum(inv[::-1])[::-1], 0.0]
        ra = np.maximum(np.sqrt(np.sum((x - xc) ** 2, axis=1)), eps)
        k = np.searchsorted(order, ra, side="right")  # bound particles with r_j <= r
        phi = -G * m_p * (k / ra + suffix[k])
        e = 0.5 * np.sum((v - vc) ** 2, axis=1) + phi
        new = e < 0.0
        nn = int(new.sum())
        if nn < 20:
            return np.zeros_like(bound), xc, vc, most, n_it
        nc = max(32, nn // 20)
        idx = np.flatnonzero(new)
        most = idx[np.argsort(e[idx])[:nc]]
        xc_new, vc_new = x[most].mean(axis=0), v[most].mean(axis=0)
        done = np.array_equal(new, bound) and np.sum((xc_new - xc) ** 2) < 1e-8
        bound, xc, vc = new, xc_new, vc_new
        if done:
            break
    return bound, xc, vc, most, n_it


PS = ctypes.sizeof(rebound.Particle)
_NAMES = ["x", "y", "z", "vx", "vy", "vz", "ax", "ay", "az", "m"]
assert [f[0] for f in rebound.Particle._fields_[:10]] == _NAMES
PDTYPE = np.dtype({"names": _NAMES, "formats": ["f8"] * 10, "offsets": [8 * i for i in range(10)],
                   "itemsize": PS})


def particle_view(s):
    """numpy structured view of the simulation's particle array (s: the C Simulation struct)."""
    buf = (ctypes.c_char * (s.N * PS)).from_address(ctypes.addressof(s._particles.contents))
    return np.frombuffer(buf, dtype=PDTYPE)


def host_forces(simp):
    a = particle_view(simp.contents)
    x = np.c_[a["x"], a["y"], a["z"]]
    g = host_accel(x)
    a["ax"] += g[:, 0]
    a["ay"] += g[:, 1]
    a["az"] += g[:, 2]


def state(sim):
    a = particle_view(sim)
    return np.c_[a["x"], a["y"], a["z"]].copy(), np.c_[a["vx"], a["vy"], a["vz"]].copy()


def run(name, work):
    """One run: 'iso_n<N>', '<orbit>_n<N>' or 'soft_check'. Cached as <work>/<name>.npz."""
    path = os.path.join(work, name + ".npz")
    if os.path.exists(path):
        return dict(np.load(path))
    t_iso = T_ISO
    if name == "soft_check":
        kind, n, sub = SOFT_CHECK["orbit"], SOFT_CHECK["n"], "fiducial"
        eps, dt, out_every = SOFT_CHECK["eps_over_rs"] * RS_SUB, SOFT_CHECK["dt"], 2 * OUT_EVERY
    else:
        kind, ntxt = name.split("_n")
        n = int(ntxt)
        half = kind.endswith("_halfsoft")  # '<orbit>_halfsoft_n<N>': half the softening and step
        if half:
            kind = kind[: -len("_halfsoft")]
        if kind.startswith("iso_"):  # iso_<key of ISO_EXTRA>_n<N>
            sub, n_x, t_iso = ISO_EXTRA[kind[4:]]
            assert n == n_x, name
            kind = "iso"
        else:
            sub = "fiducial" if kind == "iso" else ORBITS[kind].get("subhalo", "fiducial")
        eps, dt, out_every = subhalo(sub)[4], DT, OUT_EVERY
        if half:
            eps, dt, out_every = 0.5 * eps, 0.5 * DT, 2 * OUT_EVERY
    m_sub, _, r_sub, rs_sub, _ = subhalo(sub)
    t_cpu0, t_wall0 = time.process_time(), time.time()
    m, df = model_and_df(sub)
    rng = np.random.default_rng(NS[n])
    pos, vel = sample(m, df, n, rng, 10.0 * r_sub)
    m_tot = m_sub + m.m_taper
    m_p = m_tot / n
    if kind == "iso":
        x0, v0, t_end = np.zeros(3), np.zeros(3), t_iso
    else:
        o = ORBITS[kind]
        x0 = np.array([o.get("r0", 1.0) * R_HOST, 0.0, 0.0])
        v0 = np.array([o["v_r"], o["v_t"], 0.0]) * V_VIR * KMS
        t_end = o["t_end"]
    sim = rebound.Simulation()
    sim.G = G
    sim.integrator = "leapfrog"
    sim.gravity = "tree"
    sim.opening_angle2 = OPENING_ANGLE ** 2
    sim.softening = eps
    sim.root_size = BOX
    sim.boundary = "open"
    sim.dt = dt
    for i in range(n):
        p = pos[i] + x0
        w = vel[i] + v0
        sim.add(m=m_p, x=p[0], y=p[1], z=p[2], vx=w[0], vy=w[1], vz=w[2])
    if kind != "iso":
        sim.additional_forces = host_forces
        sim.force_is_velocity_dependent = 0
    e0 = sim.energy() if kind == "iso" else float("nan")
    n_out = int(round(t_end / (dt * out_every)))
    bound = np.ones(n, bool)
    most = np.arange(n)  # the first centre: the centre of mass
    rows = []
    for k in range(n_out + 1):
        if k > 0:
            sim.steps(out_every)
        x, v = state(sim)
        if len(x) != len(bound):  # a particle left the box (never happened): restart from all
            raise RuntimeError("%s: a particle left the box at t = %g" % (name, sim.t))
        bound, xc, vc, most, it = unbind(x, v, m_p, bound, most, eps)
        d = np.sqrt(np.sum((x - xc) ** 2, axis=1))
        inner = [int(np.sum(d < f * rs_sub)) for f in (0.5, 1.0, 2.0)]
        rows.append([sim.t, int(bound.sum()), *xc, *(vc / KMS), *inner, it, sim.N])
        if k % 10 == 0:
            print("%s t = %.2f Gyr  n_bound = %d  r = %.1f kpc  (%d it)  cpu %.0f s" % (
                name, sim.t, bound.sum(), np.linalg.norm(xc), it, time.process_time() - t_cpu0), flush=True)
    e1 = sim.energy() if kind == "iso" else float("nan")
    rows = np.array(rows, float)
    out = {"rows": rows, "n": n, "m_p": m_p, "m_tot": m_tot, "cpu_s": time.process_time() - t_cpu0,
           "wall_s": time.time() - t_wall0, "energy": np.array([e0, e1]), "steps": sim.steps_done}
    os.makedirs(work, exist_ok=True)
    np.savez(path, **out)
    return out


def all_runs():
    names = ["iso_n%d" % n for n in NS]
    for o in ORBITS:
        names += ["%s_n%d" % (o, n) for n in NS]
    names += ["iso_%s_n%d" % (k, v[1]) for k, v in ISO_EXTRA.items()]
    names += ["%s_halfsoft_n%d" % (o, n) for o, n in HALFSOFT.items()]
    return names + ["soft_check"]


# -------------------------------------------------------------------------------------------------
# The fixture
# -------------------------------------------------------------------------------------------------

def r6(x):
    return float("%.6g" % x)


def dumps(obj, ind=0):
    """JSON with lists of numbers (or of short lists of numbers) on one line."""
    pad = " " * (ind + 1)
    if isinstance(obj, dict):
        items = ["%s%s: %s" % (pad, json.dumps(k), dumps(v, ind + 1)) for k, v in obj.items()]
        return "{\n" + ",\n".join(items) + "\n" + " " * ind + "}"
    if isinstance(obj, list) and not all(isinstance(v, (int, float, str, bool, list)) and
                                         (not isinstance(v, list) or all(not isinstance(w, (list, dict)) for w in v))
                                         for v in obj):
        return "[\n" + ",\n".join(pad + dumps(v, ind + 1) for v in obj) + "\n" + " " * ind + "]"
    return json.dumps(obj)


def subhalo_block(key):
    """The subhalo's model and distribution function, as stored in the JSON."""
    m, df = model_and_df(key)
    m_vir, c, rv, rs, _ = subhalo(key)
    return {"profile": "NFW inside r_vir holding m_vir; Kazantzidis, Magorrian & Moore 2004 exponential taper beyond",
            "m_vir_msun": m_vir, "c": c, "r_vir_kpc": rv, "r_s_kpc": rs,
            "taper_r_decay_kpc": m.r_d, "taper_kappa": m.kappa,
            "m_taper_msun": m.m_taper, "m_total_msun": m_vir + m.m_taper,
            "df": "isotropic, Eddington inversion in the model's own potential (scipy)",
            "df_min_over_grid": float(df.f[:-1].min()), "df_nonnegative": bool(np.all(df.f[:-1] > 0.0))}


def orbit_block(name, runs):
    """The JSON record of one orbit (ORBITS[name]) from its runs (and the softening check for B)."""
    o = ORBITS[name]
    r0 = o.get("r0", 1.0)
    tp = test_particle_orbit(o["v_r"], o["v_t"], o["t_end"], r0)
    blk = {"v_r_over_v_vir": o["v_r"], "v_t_over_v_vir": o["v_t"], "t_end_gyr": o["t_end"],
           "x0_kpc": [r0 * R_HOST, 0.0, 0.0], "v0_kms": [o["v_r"] * V_VIR, o["v_t"] * V_VIR, 0.0],
           "test_particle_orbit": tp, "runs": {}}
    if r0 != 1.0:
        blk["r0_over_r_vir"] = r0
    # comparison times: 0.5 Gyr after the first pericentre, the apocentre, the end
    blk["compare_t_gyr"] = [round(tp["t_peri_gyr"][0] + 0.5, 1), round(tp["t_apo_gyr"][0], 1), o["t_end"]]
    sub = o.get("subhalo", "fiducial")
    m_vir = subhalo(sub)[0]
    if sub != "fiducial":
        # only where it differs from setup.subhalo; numerics otherwise as setup.numerics
        blk["subhalo"] = {**subhalo_block(sub), "seeds": {str(n): s for n, s in NS.items()},
                          "softening_kpc": subhalo(sub)[4], "softening_over_r_s": EPS_OVER_RS,
                          "step_timescales": timescales(sub),
                          "fiducial_step_timescales": timescales("fiducial"),
                          "notes": "replaces setup.subhalo for this orbit (f_bound = bound mass / this "
                                   "m_vir); softening %g r_s of this subhalo; step, opening angle, "
                                   "unbinding and outputs as in setup" % EPS_OVER_RS}
    for n in NS:
        rr = runs["%s_n%d" % (name, n)]
        rows, m_p = rr["rows"], float(rr["m_p"])
        s = rows[::STORE_EVERY]
        blk["runs"]["n%d" % n] = {
            "n": n, "m_particle_msun": m_p,
            "t_gyr": [r6(t) for t in s[:, 0]],
            "n_bound": [int(k) for k in s[:, 1]],
            "f_bound": [r6(k * m_p / m_vir) for k in s[:, 1]],
            "f_bound_initial": [r6(k / rows[0, 1]) for k in s[:, 1]],
            "r_kpc": [r6(math.sqrt(a * a + b * b + c * c)) for a, b, c in s[:, 2:5]],
            "centre_kpc": [[r6(a), r6(b), r6(c)] for a, b, c in s[:, 2:5]],
            "centre_v_kms": [[r6(a), r6(b), r6(c)] for a, b, c in s[:, 5:8]],
            "cpu_s": r6(float(rr["cpu_s"])), "steps": int(rr["steps"]),
        }
        if name in INNER_MASS_ORBITS:
            # the mass (all particles) inside 0.5, 1, 2 r_s of the centre, relative to t = 0: the
            # structure of the stripped remnant (the isolated runs give these for equilibrium)
            blk["runs"]["n%d" % n].update({
                "m_in_half_rs_rel": [r6(k / s[0, 8]) for k in s[:, 8]],
                "m_in_rs_rel": [r6(k / s[0, 9]) for k in s[:, 9]],
                "m_in_2rs_rel": [r6(k / s[0, 10]) for k in s[:, 10]],
                "n_in_half_rs_rs_2rs_t0": [int(s[0, 8]), int(s[0, 9]), int(s[0, 10])],
            })
    if name == SOFT_CHECK["orbit"]:
        rr = runs["soft_check"]
        rows, m_p = rr["rows"], float(rr["m_p"])
        s = rows[::STORE_EVERY]
        blk["softening_check"] = {
            "n": SOFT_CHECK["n"], "softening_kpc": SOFT_CHECK["eps_over_rs"] * RS_SUB,
            "softening_over_r_s": SOFT_CHECK["eps_over_rs"], "dt_gyr": SOFT_CHECK["dt"],
            "t_gyr": [r6(t) for t in s[:, 0]],
            "n_bound": [int(k) for k in s[:, 1]],
            "f_bound": [r6(k * m_p / M_SUB) for k in s[:, 1]],
            "cpu_s": r6(float(rr["cpu_s"])), "steps": int(rr["steps"]),
            "notes": "the N = %d run of this orbit with half the softening and half the step "
                     "(same realisation); not part of the band, printed by the test" % SOFT_CHECK["n"],
        }
    if name in HALFSOFT:
        blk["softening_check"] = halfsoft_record(name, runs)
    return blk


def halfsoft_record(name, runs):
    """orbits.<name>.softening_check for an orbit in HALFSOFT: bound mass and inner masses of the run
    with half the softening and half the step."""
    n = HALFSOFT[name]
    rr = runs["%s_halfsoft_n%d" % (name, n)]
    sub = ORBITS[name].get("subhalo", "fiducial")
    m_vir, eps = subhalo(sub)[0], subhalo(sub)[4]
    rows, m_p = rr["rows"], float(rr["m_p"])
    s = rows[::STORE_EVERY]  # outputs every 2 OUT_EVERY steps of half the length: 50 Myr, as the others
    return {
        "n": n, "softening_kpc": 0.5 * eps, "softening_over_r_s": 0.5 * EPS_OVER_RS, "dt_gyr": 0.5 * DT,
        "t_gyr": [r6(t) for t in s[:, 0]],
        "n_bound": [int(k) for k in s[:, 1]],
        "f_bound": [r6(k * m_p / m_vir) for k in s[:, 1]],
        "r_kpc": [r6(math.sqrt(a * a + b * b + c * c)) for a, b, c in s[:, 2:5]],
        "m_in_half_rs_rel": [r6(k / s[0, 8]) for k in s[:, 8]],
        "m_in_rs_rel": [r6(k / s[0, 9]) for k in s[:, 9]],
        "m_in_2rs_rel": [r6(k / s[0, 10]) for k in s[:, 10]],
        "cpu_s": r6(float(rr["cpu_s"])), "steps": int(rr["steps"]),
        "notes": "the N = %d run of this orbit with half the softening and half the step (same "
                 "realisation as its N = %d run); not part of the band, printed by the tests" % (n, n),
    }


def add_softening_checks(work, names):
    """Add orbits.<name>.softening_check (HALFSOFT) to the existing JSON, keeping the rest as it is."""
    with open(OUT) as fh:
        out = json.load(fh)
    cpu = 0.0
    for name in names:
        assert name in HALFSOFT and "softening_check" not in out["orbits"][name], name
        key = "%s_halfsoft_n%d" % (name, HALFSOFT[name])
        runs = {key: run(key, work)}
        out["orbits"][name]["softening_check"] = halfsoft_record(name, runs)
        cpu += float(runs[key]["cpu_s"])
    out["provenance"].setdefault("additions", []).append({
        "softening_checks": list(names), "generated": TODAY, "libraries": dict(LIBRARIES),
        "python": "%d.%d.%d" % sys.version_info[:3], "cpu_s": r6(cpu),
        "notes": "made later than the rest, with the versions given here (as the orbits D, E)"})
    out["provenance"]["notes"] += (" Softening checks of orbits %s added later: %.0f s more N-body CPU."
                                   % (", ".join(names), cpu))
    out["total_cpu_s"] = r6(float(out["total_cpu_s"]) + cpu)
    with open(OUT, "w") as fh:
        fh.write(dumps(out) + "\n")
    print("added the softening checks of %s to %s (N-body CPU %.0f s)" % (", ".join(names), OUT, cpu))

def assemble(work):
    m, df = model_and_df()
    runs = {name: run(name, work) for name in all_runs()}
    chk = eddington_check_vs_galpy()
    setup = {
        "cosmology_for_virial_radii": {"h": H, "omega_m": OMEGA_M, "rho_crit_msun_kpc3": RHO_CRIT,
                                       "delta_vir_crit": DELTA_VIR,
                                       "definition": "Bryan & Norman 1998 at z = 0, flat: 18 pi^2 + 82 x - 39 x^2, x = Omega_m - 1"},
        "G_kpc_kms2_per_msun": G_KMS, "kms_in_kpc_per_gyr": KMS,
        "host": {"profile": "NFW, untruncated, static (analytic acceleration on every particle)",
                 "m_vir_msun": M_HOST, "c": C_HOST, "r_vir_kpc": R_HOST, "r_s_kpc": RS_HOST,
                 "m_scale_msun": MS_HOST, "v_vir_kms": V_VIR},
        "subhalo": {**subhalo_block("fiducial"), "eddington_check_vs_galpy": chk,
                    "seeds": {str(n): s for n, s in NS.items()}},
        "numerics": {"code": "REBOUND %s" % rebound.__version__, "gravity": "tree",
                     "opening_angle": OPENING_ANGLE, "softening": "Plummer",
                     "softening_kpc": EPS, "softening_over_r_s": EPS_OVER_RS,
                     "integrator": "leapfrog (drift-kick-drift), fixed step", "dt_gyr": DT,
                     "box_kpc": BOX, "boundary": "open", "output_every_gyr": DT * OUT_EVERY,
                     "stored_every_gyr": DT * OUT_EVERY * STORE_EVERY, "threads": 1},
        "unbinding": ("iterative, from the previous output's bound set, first centre = present mean position and "
                      "velocity of the previous output's most bound particles; potential of the bound "
                      "set in the spherical approximation about the centre (r floored at the softening), "
                      "evaluated for all particles (rebinding allowed); E = |v - v_c|^2/2 + Phi < 0; centre = "
                      "mean position and velocity of the max(32, 5%) most bound particles; until the set "
                      "is unchanged (at most 100 iterations); no host potential in E; < 20 bound: disrupted"),
        "f_bound_definition": "n_bound m_p / m_vir, m_p = m_total / N (m_vir = NFW mass inside r_vir = retinue's m_acc)",
    }
    def iso_entry(rr, n, m_vir):
        """One isolated run's record: bound fraction, enclosed masses, energy drift."""
        rows, m_p = rr["rows"], float(rr["m_p"])
        return {
            "n": n, "m_particle_msun": m_p,
            "t_gyr": [r6(t) for t in rows[:, 0]],
            "f_bound": [r6(k * m_p / m_vir) for k in rows[:, 1]],
            "m_in_half_rs_rel": [r6(k / rows[0, 8]) for k in rows[:, 8]],
            "m_in_rs_rel": [r6(k / rows[0, 9]) for k in rows[:, 9]],
            "m_in_2rs_rel": [r6(k / rows[0, 10]) for k in rows[:, 10]],
            "n_in_half_rs_rs_2rs_t0": [int(rows[0, 8]), int(rows[0, 9]), int(rows[0, 10])],
            "energy_rel_drift": r6((rr["energy"][1] - rr["energy"][0]) / abs(rr["energy"][0])),
            "cpu_s": r6(float(rr["cpu_s"])), "steps": int(rr["steps"]),
        }

    iso = {}
    for n in NS:
        iso["n%d" % n] = iso_entry(runs["iso_n%d" % n], n, M_SUB)
    # other subhaloes alone: keyed "<orbit>_n<N>" (the orbit whose subhalo and realisation it is)
    for key, (sub, n, t_iso) in ISO_EXTRA.items():
        m_vir, c = subhalo(sub)[0], subhalo(sub)[1]
        iso["%s_n%d" % (key, n)] = {
            "subhalo": "orbits.%s.subhalo" % key, "m_vir_msun": m_vir, "c": c,
            **iso_entry(runs["iso_%s_n%d" % (key, n)], n, m_vir),
        }
    for key in iso:
        b = iso[key]
        qs = ("m_in_half_rs_rel", "m_in_rs_rel", "m_in_2rs_rel")
        b["max_rel_change"] = {q: r6(max(abs(x - 1.0) for x in b[q])) for q in qs}
        b["max_rel_change"]["f_bound"] = r6(max(abs(x / b["f_bound"][0] - 1.0) for x in b["f_bound"]))
        half = [i for i, t in enumerate(b["t_gyr"]) if t >= 0.5 * b["t_gyr"][-1] - 1e-9]
        b["mean_over_last_half"] = {q: r6(sum(b[q][i] for i in half) / len(half)) for q in qs}
    orbits = {name: orbit_block(name, runs) for name in ORBITS}
    total_cpu = sum(float(r["cpu_s"]) for r in runs.values())
    m_c = model_and_df("massive")[0]
    notes = ("Idealised N-body check of the tidal-stripping rate (module docstring of the script). "
             "f_bound = bound mass / m_vir (1e9 Msun, the NFW mass inside r_vir; orbit C: 1e10 Msun, "
             "c = 8, orbits.C.subhalo); the realisation holds %.3f m_vir in all (the taper; C: %.3f). "
             "Total N-body CPU %.0f s." % ((M_SUB + m.m_taper) / M_SUB,
                                           (m_c.m_vir + m_c.m_taper) / m_c.m_vir, total_cpu))
    out = {"provenance": {"script": SCRIPT, "libraries": dict(LIBRARIES), "generated": TODAY,
                          "notes": notes},
           "units": {"mass": "Msun", "length": "kpc", "time": "Gyr", "velocity": "km/s"},
           "setup": setup, "isolated": iso, "orbits": orbits, "total_cpu_s": r6(total_cpu)}
    with open(OUT, "w") as fh:
        fh.write(dumps(out) + "\n")
    print("wrote %s (total N-body CPU %.0f s)" % (OUT, total_cpu))


def add_orbits(work, names):
    """Add the orbits `names` to the existing JSON without re-running the others: their runs (cached
    or run now) give their records as in `assemble`; everything already in the JSON is kept as it
    is, and provenance.additions records the libraries and Python these orbits were made with."""
    with open(OUT) as fh:
        out = json.load(fh)
    runs = {"%s_n%d" % (name, n): run("%s_n%d" % (name, n), work) for name in names for n in NS}
    for name in names:
        assert name in ORBITS and name not in out["orbits"], name
        out["orbits"][name] = orbit_block(name, runs)
    cpu = sum(float(r["cpu_s"]) for r in runs.values())
    out["provenance"].setdefault("additions", []).append({
        "orbits": list(names), "generated": TODAY, "libraries": dict(LIBRARIES),
        "python": "%d.%d.%d" % sys.version_info[:3], "cpu_s": r6(cpu),
        "notes": "made later than the rest, with the versions given here (the machine had no "
                 "Python 3.12 for the pinned scipy 1.18.1 and numpy 2.5.5); the N-body code, "
                 "REBOUND, is the pinned version"})
    out["provenance"]["notes"] += (" Orbits %s added later (provenance.additions; each orbit's subhalo in "
                                   "orbits.<name>.subhalo): %.0f s more N-body CPU." % (", ".join(names), cpu))
    out["total_cpu_s"] = r6(float(out["total_cpu_s"]) + cpu)
    with open(OUT, "w") as fh:
        fh.write(dumps(out) + "\n")
    print("added %s to %s (N-body CPU %.0f s)" % (", ".join(names), OUT, cpu))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--work", default="/tmp/stripping_nbody_runs")
    ap.add_argument("--run", action="append", help="run only these (iso_n5000, A_n20000, ...)")
    ap.add_argument("--assemble", action="store_true", help="only assemble the JSON (runs what is missing)")
    ap.add_argument("--add-orbits", help="add these orbits (comma-separated, e.g. D,E) to the existing JSON, "
                                         "keeping the rest as it is")
    ap.add_argument("--add-softening-checks", help="add the softening checks (HALFSOFT) of these orbits "
                                                   "(comma-separated, e.g. D) to the existing JSON")
    a = ap.parse_args()
    if a.add_softening_checks:
        add_softening_checks(a.work, a.add_softening_checks.split(","))
        return
    if a.add_orbits:
        add_orbits(a.work, a.add_orbits.split(","))
        return
    if a.run:
        for name in a.run:
            assert name in all_runs(), name
            run(name, a.work)
        return
    assemble(a.work)


if __name__ == "__main__":
    sys.exit(main())
