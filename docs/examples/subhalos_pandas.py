"""The subhalo table of a retinue run store as a pandas DataFrame, with the columns of each
subhalo's host joined on, and the satellites the store's last analysis selected.

Usage: python docs/examples/subhalos_pandas.py RUN.h5 [OUT.csv]

Needs h5py and pandas (pip install h5py pandas). With OUT.csv the joined table is also written
as CSV, one row per subhalo (about 0.6 kB a row; a 1.2e12 Msun host at the default resolution
has about 3,800 rows). The selection is checked against the store's own count of candidates
per host; the script exits with an error if they differ.
"""
import sys
import tomllib

import h5py
import numpy as np
import pandas as pd


def table(f, name):
    """One group of 1-D columns as a DataFrame; its row number is the DataFrame's index."""
    return pd.DataFrame({k: f[name][k][:] for k in f[name]})


path = sys.argv[1]
with h5py.File(path, "r") as f:
    hosts = table(f, "hosts")
    subs = table(f, "subhalos")
    units = {k: f["subhalos"][k].attrs["units"] for k in f["subhalos"]}
    # the last analysis: its settings (TOML) and its candidates per host
    latest = f["analysis"].attrs["latest"]
    analysis = f["analysis"][latest]
    settings = tomllib.loads(analysis.attrs["tests"])
    candidates = analysis["candidates_per_host"][:]
    # the hosts those counts are for (an `infall --cell` analysis tests only its cells' hosts;
    # stores from before 2026-12-04 lack the dataset, and their whole-store counts are for
    # every host)
    tested = (analysis["candidates_host_index"][:] if "candidates_host_index" in analysis
              else hosts["host_index"].to_numpy())

# Every subhalo row with its host's columns, prefixed host_ (host_m_vir_msun, host_r_vir_kpc,
# host_mass_bin, host_cosmology_index, ...): /subhalos/host_row is the row of its host in /hosts.
# host_index is in both tables; sub_offset and sub_count only say where a host's rows are.
host_cols = hosts.drop(columns=["host_index", "sub_offset", "sub_count"]).add_prefix("host_")
df = subs.merge(host_cols, left_on="host_row", right_index=True, how="left",
                validate="many_to_one")
assert len(df) == len(subs)

# The satellites the analysis counted ([tests.selection]; docs/configuration.md): bound at the
# end (status 0 in the host, or 2 inside another subhalo when satellites of satellites count),
# with a galaxy, in the mass, magnitude and radius ranges; with survival = "pericentre" also no
# pericentre inside the disc cut; with observable_only, detected by the configured survey.
sel = settings["selection"]
alive = df["status"].isin([0, 2] if sel["include_satellites_of_satellites"] else [0])
mask = (alive & (df["occupied"] == 1)
        & df["m_peak_msun"].between(*sel["m_peak_msun"])
        & df["mstar_msun"].between(*sel["mstar_msun"])
        & df["m_v"].between(*sel["m_v"])
        & (df["r_kpc"] / df["host_r_vir_kpc"]).between(*sel["r_over_rvir"]))
if sel["survival"] == "pericentre":
    mask &= df["t_disrupt_pericentre_gyr"].isna()
if sel["observable_only"]:
    mask &= df["observable"] == 1
satellites = df[mask]

per_host = satellites.groupby("host_row").size().reindex(hosts.index, fill_value=0)
rows = hosts.index[hosts["host_index"].isin(tested)]
per_host = per_host.loc[rows]
satellites = satellites[satellites["host_row"].isin(rows)]
if not np.array_equal(per_host.to_numpy(), candidates):
    sys.exit(f"selection differs from the store's candidates per host: "
             f"{per_host.to_numpy()[:8]} against {candidates[:8]}")

print(f"{len(hosts)} hosts ({len(rows)} tested), {len(df)} subhaloes x {df.shape[1]} columns; "
      f"{len(satellites)} selected as \"{sel['name']}\" (analysis '{latest}', "
      f"{per_host.median():.0f} per host, the store's own count)")
# e.g. the median first-infall time of the selected satellites in each host-mass bin
print(satellites.groupby("host_mass_bin")["t_first_host_infall_gyr"].median()
      .rename(f"median t_first_host_infall [{units['t_first_host_infall_gyr']}]")
      .to_frame().to_string())

if len(sys.argv) > 2:
    df.to_csv(sys.argv[2], index=False)
    print(f"wrote {sys.argv[2]}")
