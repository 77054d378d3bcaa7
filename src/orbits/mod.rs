//! Subhalo dynamics: infall orbits, integration in the evolving host (or, for satellites of
//! satellites, in their parent) with dynamical friction and tidal stripping, disruption,
//! mergers, and the events along every orbit.

pub mod events;
pub mod evolve;
pub mod follow;
pub mod friction;
pub mod in_parent;
pub mod initial;
pub mod integrate;
pub mod stripping;
pub mod test_particle;
pub mod tidal_track;

use serde::{Deserialize, Serialize};

use crate::error::InvalidValue;

pub use evolve::{
    evolve_host_subhaloes, evolve_in_isolated_halo, evolve_pair_in_host, evolve_subhalo,
    integrate_point_mass, integrate_test_particle, SubhaloResult, SubhaloStatus,
};
pub use integrate::Tolerances;

/// Choices for the subhalo orbits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct OrbitOptions {
    /// Relative tolerance of the orbit integrator for subhaloes orbiting the host.
    pub rtol: f64,
    /// Relative tolerance for satellites of satellites orbiting inside another subhalo
    /// (absolute tolerances scale with that subhalo's virial radius and speed).
    pub rtol_in_subhalo: f64,
    /// Longest step of the orbit integrator (Gyr): it also sets how often stripping, tidal
    /// radii and releases are updated far from the host's centre.
    pub max_step_gyr: f64,
    /// Dynamical friction on/off.
    pub friction: bool,
    /// w in the friction mass m^(1-w) m_acc^w (`friction::friction_mass`; 0: the bound mass).
    pub friction_mass_infall_weight: f64,
    /// Tidal stripping on/off.
    pub stripping: bool,
    /// alpha_s of the mass-loss rate (for a subhalo of concentration 10 at infall when
    /// `stripping_alpha_c_slope` > 0).
    pub stripping_alpha: f64,
    /// p in alpha_s(c_acc) = stripping_alpha (c_acc / 10)^(-p), c_acc held within 8-15
    /// (`stripping::Stripping`).
    pub stripping_alpha_c_slope: f64,
    /// Physical disruption: bound fraction below this.
    pub disrupt_bound_fraction: f64,
    /// Physical disruption: tidal radius below this fraction of the infall scale radius
    /// (0 = off).
    pub disrupt_tidal_radius_over_rs: f64,
    /// Pericentre model: a subhalo whose pericentre comes inside this radius (kpc) is
    /// counted as destroyed by the disc at that pericentre.
    pub pericentre_cut_kpc: f64,
    /// Disc-tide model of disruption: a subhalo is destroyed at a pericentre where the tide
    /// of the host's disc and bulge exceeds this many times its own V_max^2 / R_max^2
    /// (`follow::disc_destroys`); 0 = off.
    pub disc_tide_ratio: f64,
    /// A subhalo massive enough to feel friction (m > 1e-4 M_vir) whose orbit is confined
    /// inside this radius (kpc; `follow::confined_in_host`) has merged with the central galaxy
    /// and is removed (0 = never).
    pub central_merge_kpc: f64,
    /// The distribution infall velocities are drawn from (`initial::InfallOrbits`).
    pub infall_orbits: initial::InfallOrbits,
}

impl Default for OrbitOptions {
    fn default() -> Self {
        Self {
            rtol: 1e-4,
            rtol_in_subhalo: 3e-4,
            max_step_gyr: 0.2,
            friction: true,
            friction_mass_infall_weight: 0.0,
            stripping: true,
            stripping_alpha: 0.75,
            stripping_alpha_c_slope: 0.0,
            disrupt_bound_fraction: 1e-3,
            disrupt_tidal_radius_over_rs: 0.0,
            pericentre_cut_kpc: 20.0,
            disc_tide_ratio: 1.2,
            central_merge_kpc: 1.0,
            infall_orbits: initial::InfallOrbits::default(),
        }
    }
}

impl OrbitOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut ck = crate::error::Checker::new(prefix);
        ck.num(
            "rtol",
            self.rtol,
            self.rtol >= 1e-12 && self.rtol <= 1e-2,
            "must be in [1e-12, 1e-2]",
        );
        ck.num(
            "rtol_in_subhalo",
            self.rtol_in_subhalo,
            self.rtol_in_subhalo >= 1e-12 && self.rtol_in_subhalo <= 1e-2,
            "must be in [1e-12, 1e-2]",
        );
        ck.num(
            "max_step_gyr",
            self.max_step_gyr,
            self.max_step_gyr >= 1e-4 && self.max_step_gyr <= 1.0,
            "must be in [1e-4, 1] Gyr",
        );
        ck.num(
            "stripping_alpha",
            self.stripping_alpha,
            self.stripping_alpha > 0.0 && self.stripping_alpha <= 20.0,
            "must be in (0, 20]",
        );
        ck.num(
            "friction_mass_infall_weight",
            self.friction_mass_infall_weight,
            (0.0..=1.0).contains(&self.friction_mass_infall_weight),
            "must be in [0, 1] (0 = friction on the bound mass, 1 = on the infall mass)",
        );
        ck.num(
            "stripping_alpha_c_slope",
            self.stripping_alpha_c_slope,
            (0.0..=2.0).contains(&self.stripping_alpha_c_slope),
            "must be in [0, 2] (0 = one alpha_s for every concentration)",
        );
        ck.num(
            "disrupt_bound_fraction",
            self.disrupt_bound_fraction,
            (0.0..1.0).contains(&self.disrupt_bound_fraction),
            "must be in [0, 1)",
        );
        ck.num(
            "disrupt_tidal_radius_over_rs",
            self.disrupt_tidal_radius_over_rs,
            (0.0..10.0).contains(&self.disrupt_tidal_radius_over_rs),
            "must be in [0, 10)",
        );
        ck.num(
            "pericentre_cut_kpc",
            self.pericentre_cut_kpc,
            (0.0..=200.0).contains(&self.pericentre_cut_kpc),
            "must be in [0, 200] kpc",
        );
        ck.num(
            "disc_tide_ratio",
            self.disc_tide_ratio,
            (0.0..=1e3).contains(&self.disc_tide_ratio),
            "must be in [0, 1000] (0 = off)",
        );
        ck.num(
            "central_merge_kpc",
            self.central_merge_kpc,
            (0.0..=50.0).contains(&self.central_merge_kpc),
            "must be in [0, 50] kpc",
        );
        // without stripping and without a central merger, a subhalo sunk by friction keeps its
        // mass and circles the centre on ever shorter orbits until the end: the run would
        // crawl
        ck.num(
            "central_merge_kpc",
            self.central_merge_kpc,
            !(self.friction && !self.stripping && self.central_merge_kpc == 0.0),
            "must be > 0 when friction = true and stripping = false (nothing else ends a \
             subhalo that sinks to the centre)",
        );
        ck.problems
    }
}
