"""Read a retinue run store into arrays with h5py (and optionally pandas).

Usage: python docs/examples/read_store.py RUN.h5
"""
import sys

import h5py
import numpy as np

with h5py.File(sys.argv[1], "r") as f:
    hosts = {k: f["hosts"][k][:] for k in f["hosts"]}
    subs = {k: f["subhalos"][k][:] for k in f["subhalos"]}
    units = {k: f["subhalos"][k].attrs["units"] for k in f["subhalos"]}

# satellites of the first host that survive and host a galaxy, inside R_vir
h = 0
rows = slice(hosts["sub_offset"][h], hosts["sub_offset"][h] + hosts["sub_count"][h])
alive = (subs["status"][rows] == 0) & (subs["occupied"][rows] == 1)
inside = subs["r_kpc"][rows] < hosts["r_vir_kpc"][h]
print(f"{len(hosts['host_index'])} hosts, {len(subs['branch'])} subhaloes")
print(f"host 0: M_vir = {hosts['m_vir_msun'][h]:.3e} Msun, "
      f"{np.count_nonzero(alive & inside)} luminous satellites inside R_vir")
print("first-infall times [{}] of the first five: {}".format(
    units["t_first_host_infall_gyr"], subs["t_first_host_infall_gyr"][rows][:5]))
