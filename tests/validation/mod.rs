//! Validation against outside references. Each test names its source and the reason for its
//! tolerance. Fixtures: tests/reference (see its README for the generating script).

mod val_cosmology;
mod val_galaxies;
mod val_halo;
mod val_linear;
mod val_massfunction;
mod val_orbits;
mod val_pair_orbit;
mod val_pairs;
mod val_stats;
mod val_subhaloes;
mod val_trees;

use retinue::cosmology::CosmologyParams;

/// The Planck 2018 linear theory at the default options, which most validation tests use.
pub fn planck18() -> retinue::LinearTheory {
    retinue::LinearTheory::new(
        retinue::Cosmology::from_preset("planck18").unwrap(),
        retinue::LinearOptions::default(),
    )
    .unwrap()
}
use serde_json::Value;

/// Rust parameters matching a fixture cosmology's colossus parameters.
pub fn params_from_colossus(name: &str, cp: &Value, radiation: bool) -> CosmologyParams {
    let f = |k: &str| cp[k].as_f64().unwrap_or_else(|| panic!("{name}: no {k}"));
    let de_w = cp["w0"].as_f64().unwrap_or(-1.0);
    CosmologyParams {
        name: name.to_string(),
        h: f("h"),
        omega_m: f("Om0"),
        omega_b: f("Ob0"),
        sigma8: f("sigma8"),
        n_s: f("ns"),
        omega_k: cp["Ok0"].as_f64().unwrap_or(0.0),
        w: de_w,
        t_cmb_k: f("Tcmb0"),
        n_eff: f("Neff"),
        radiation,
    }
}
