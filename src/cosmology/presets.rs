//! Named parameter sets with their published sources. Omega_m includes baryons; all flat,
//! with T_cmb = 2.7255 K (Fixsen 2009, ApJ 707, 916) and N_eff = 3.046 massless neutrinos.
//! Values as tabulated in colossus 1.4.0 (`cosmology.cosmologies`), which follow the papers.

use super::CosmologyParams;
use crate::error::CosmologyError;

/// Names accepted by `preset`.
pub const PRESET_NAMES: &[&str] = &[
    "planck18",
    "planck18-cmb",
    "planck15",
    "planck13",
    "wmap9",
    "wmap7",
    "wmap5",
];

struct Entry {
    name: &'static str,
    h: f64,
    omega_m: f64,
    omega_b: f64,
    sigma8: f64,
    n_s: f64,
    /// Where the numbers come from.
    #[allow(dead_code)]
    source: &'static str,
}

const TABLE: &[Entry] = &[
    Entry {
        name: "planck18",
        h: 0.6766,
        omega_m: 0.3111,
        omega_b: 0.0490,
        sigma8: 0.8102,
        n_s: 0.9665,
        source: "Planck Collaboration 2020, A&A 641, A6, Table 2 last column (TT,TE,EE+lowE+lensing+BAO)",
    },
    Entry {
        name: "planck18-cmb",
        h: 0.6736,
        omega_m: 0.3153,
        omega_b: 0.0493,
        sigma8: 0.8111,
        n_s: 0.9649,
        source: "Planck Collaboration 2020, A&A 641, A6, Table 2 (TT,TE,EE+lowE+lensing)",
    },
    Entry {
        name: "planck15",
        h: 0.6774,
        omega_m: 0.3089,
        omega_b: 0.0486,
        sigma8: 0.8159,
        n_s: 0.9667,
        source: "Planck Collaboration 2016, A&A 594, A13",
    },
    Entry {
        name: "planck13",
        h: 0.6777,
        omega_m: 0.3071,
        omega_b: 0.0483,
        sigma8: 0.8288,
        n_s: 0.9611,
        source: "Planck Collaboration 2014, A&A 571, A16 (Planck+WP+highL+BAO)",
    },
    Entry {
        name: "wmap9",
        h: 0.6932,
        omega_m: 0.2865,
        omega_b: 0.0463,
        sigma8: 0.820,
        n_s: 0.9608,
        source: "Hinshaw et al. 2013, ApJS 208, 19 (WMAP+eCMB+BAO+H0)",
    },
    Entry {
        name: "wmap7",
        h: 0.702,
        omega_m: 0.2743,
        omega_b: 0.0458,
        sigma8: 0.816,
        n_s: 0.968,
        source: "Komatsu et al. 2011, ApJS 192, 18 (WMAP+BAO+H0)",
    },
    Entry {
        name: "wmap5",
        h: 0.705,
        omega_m: 0.2732,
        omega_b: 0.0456,
        sigma8: 0.812,
        n_s: 0.960,
        source: "Komatsu et al. 2009, ApJS 180, 330 (WMAP+BAO+SN)",
    },
];

/// Parameters of a named preset (case-insensitive; `_` and `-` are interchangeable).
pub fn preset(name: &str) -> Result<CosmologyParams, CosmologyError> {
    let key = name.trim().to_ascii_lowercase().replace('_', "-");
    let e = TABLE
        .iter()
        .find(|e| e.name == key)
        .ok_or_else(|| CosmologyError::UnknownPreset {
            got: name.to_string(),
            allowed: PRESET_NAMES.join(", "),
        })?;
    Ok(CosmologyParams {
        name: e.name.to_string(),
        h: e.h,
        omega_m: e.omega_m,
        omega_b: e.omega_b,
        sigma8: e.sigma8,
        n_s: e.n_s,
        omega_k: 0.0,
        w: -1.0,
        t_cmb_k: 2.7255,
        n_eff: 3.046,
        radiation: true,
    })
}

/// The published source of a preset's numbers.
pub fn preset_source(name: &str) -> Option<&'static str> {
    let key = name.trim().to_ascii_lowercase().replace('_', "-");
    TABLE.iter().find(|e| e.name == key).map(|e| e.source)
}
