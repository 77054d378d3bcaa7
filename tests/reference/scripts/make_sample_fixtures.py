"""Reference values for the observed-sample reader's sky conversions (src/stats/sample.rs,
test `val_sky_conversions_against_astropy`): Galactic (l, b) of ICRS (RA, Dec), and the
galactocentric distance of an object at heliocentric distance d in a direction on the sky.

The galactocentric distance comes from astropy's Galactocentric frame set up as the crate's
frame (galaxies/observability.rs, `SurveyOptions::helio`): the Sun at R0 = 8.178 kpc from the
centre, in the disc plane (z_sun = 0; the Rust test sets sun_z_kpc = 0 too), and the centre in
the direction l = b = 0 (astropy's default centre is Sgr A*'s ICRS position, 0.07 degrees away;
here `galcen_coord` is set to (l, b) = (0, 0) instead). The Sun's velocity does not enter.

Run from the repo root: python tests/reference/scripts/make_sample_fixtures.py
(astropy and numpy as pinned in tests/reference/requirements.txt, < 1 s); writes
tests/reference/sample_sky.json.
"""

import datetime
import json

import astropy
import astropy.units as u
import numpy as np
from astropy.coordinates import Galactocentric, SkyCoord

R0_KPC = 8.178

# (ra_deg, dec_deg, d_helio_kpc): spread over the sky, near and far, incl. both poles'
# neighbourhoods and RA wrapping
RADEC = [
    (17.3, 12.8, 0.8),
    (150.0, 22.0, 250.0),
    (160.0, 67.0, 76.0),
    (3.5, -30.5, 86.0),
    (266.4, -29.0, 20.0),
    (95.5, -52.0, 50.0),
    (227.0, 67.2, 76.0),
    (359.9, 0.1, 150.0),
    (192.0, 27.0, 35.0),
    (45.0, -85.0, 400.0),
]

# (l_deg, b_deg, d_helio_kpc)
LB = [
    (0.0, 0.0, 8.178),
    (60.0, 30.0, 100.0),
    (180.0, -45.0, 30.0),
    (300.0, 80.0, 500.0),
    (-30.0, -10.0, 12.0),
]


def main():
    centre = SkyCoord(l=0 * u.deg, b=0 * u.deg, frame="galactic").icrs
    frame = Galactocentric(galcen_distance=R0_KPC * u.kpc, z_sun=0 * u.pc, galcen_coord=centre)

    def r_gc(c):
        g = c.transform_to(frame)
        return float(np.sqrt(g.x.to_value(u.kpc) ** 2 + g.y.to_value(u.kpc) ** 2
                             + g.z.to_value(u.kpc) ** 2))

    radec = []
    for ra, dec, d in RADEC:
        c = SkyCoord(ra=ra * u.deg, dec=dec * u.deg, distance=d * u.kpc, frame="icrs")
        gal = c.galactic
        radec.append({
            "ra_deg": ra, "dec_deg": dec, "d_helio_kpc": d,
            "l_deg": float(gal.l.to_value(u.deg)), "b_deg": float(gal.b.to_value(u.deg)),
            "r_gc_kpc": r_gc(c),
        })
    lb = []
    for l, b, d in LB:
        c = SkyCoord(l=l * u.deg, b=b * u.deg, distance=d * u.kpc, frame="galactic")
        lb.append({"l_deg": l, "b_deg": b, "d_helio_kpc": d, "r_gc_kpc": r_gc(c)})
    out = {
        "provenance": {
            "script": "tests/reference/scripts/make_sample_fixtures.py",
            "libraries": {"astropy": astropy.__version__, "numpy": np.__version__},
            "date": datetime.date.today().isoformat(),
            "notes": (
                "ICRS -> Galactic with astropy's `galactic` frame (defined from FK5 J2000; "
                "differs from the Hipparcos ICRS matrix by the frame bias, about 2e-5 "
                "degrees). r_gc_kpc: astropy Galactocentric with galcen_distance = 8.178 kpc, "
                "z_sun = 0, galcen_coord = the ICRS direction of (l, b) = (0, 0), roll = 0."
            ),
        },
        "sun_r0_kpc": R0_KPC,
        "sun_z_kpc": 0.0,
        "radec": radec,
        "lb": lb,
    }
    with open("tests/reference/sample_sky.json", "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main()
