"""Read a retinue run store into arrays with h5py (and optionally pandas).

Usage: python docs/examples/read_store.py RUN.h5
"""
import sys

import h5py
import numpy as np

MSTAR_MIN = 1e5  # Msun: the example's stellar-mass floor (occupied haloes go down to ~10 Msun)

with h5py.File(sys.argv[1], "r") as f:
    hosts = {k: f["hosts"][k][:] for k in f["hosts"]}
    subs = {k: f["subhalos"][k][:] for k in f["subhalos"]}
    units = {k: f["subhalos"][k].attrs["units"] for k in f["subhalos"]}

# Satellites of the first host that survive as the pericentre survival model requires
# (survival = "pericentre": still a bound object, i.e. status 0 in the host or 2 inside another
# subhalo, and no pericentre inside the disc cut; the default model, "physical", asks only the
# first) and lie inside R_vir today; of these, those with M* >= MSTAR_MIN and those the
# configured survey would detect (any M*). docs/examples/subhalos_pandas.py applies the run's
# own selection with pandas.
h = 0
rows = slice(hosts["sub_offset"][h], hosts["sub_offset"][h] + hosts["sub_count"][h])
s = {k: v[rows] for k, v in subs.items()}
sat = (np.isin(s["status"], [0, 2]) & np.isnan(s["t_disrupt_pericentre_gyr"])
       & (s["r_kpc"] < hosts["r_vir_kpc"][h]))
massive = sat & (s["mstar_msun"] >= MSTAR_MIN)
seen = sat & (s["observable"] == 1)
print(f"{len(hosts['host_index'])} hosts, {len(subs['branch'])} subhaloes")
print(f"host 0: M_vir = {hosts['m_vir_msun'][h]:.3e} Msun, R_vir = {hosts['r_vir_kpc'][h]:.0f} kpc; "
      f"surviving satellites inside R_vir: {np.count_nonzero(massive)} with "
      f"M* >= {MSTAR_MIN:.0e} Msun, {np.count_nonzero(seen)} observable by the configured survey")
print("first-infall times [{}] of the first five with M* >= {:.0e} Msun: {}".format(
    units["t_first_host_infall_gyr"], MSTAR_MIN, s["t_first_host_infall_gyr"][massive][:5]))
