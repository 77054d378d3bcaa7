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

/// The settings calibrated together with the concentration-dependent stripping rate
/// (docs/methods.md, 2026-12-05): `stripping_alpha`, `stripping_alpha_c_slope`,
/// `friction_mass_infall_weight`, `disc_tide_ratio`.
pub const BY_CONCENTRATION: (f64, f64, f64, f64) = (1.15, 0.5, 0.3, 0.85);

impl OrbitOptions {
    /// What `check` says of settings calibrated on another stripping rate than the one set
    /// (empty: nothing to say). With `stripping_alpha_c_slope` > 0 the stripping is faster
    /// than the default's, which friction on the bound mass alone and the default disc
    /// calibration were made for: children then sink into their parents too slowly
    /// (1.20-1.60 times the merging-time fit at z = 0 with friction on the bound mass) and
    /// the disc's tide destroys too few (0.53 of the subhaloes with pericentres inside 25 kpc
    /// survive at 1.2 against the target 0.40).
    pub fn calibration_notes(&self) -> Vec<String> {
        let (a, p, w, d) = BY_CONCENTRATION;
        let mut notes = Vec::new();
        if self.stripping_alpha_c_slope > 0.0 && self.stripping && self.friction {
            if self.friction_mass_infall_weight == 0.0 {
                notes.push(format!(
                    "orbits.stripping_alpha_c_slope = {} with friction on the bound mass alone \
                     (orbits.friction_mass_infall_weight = 0): satellites of satellites then \
                     sink into their parents 1.2-1.6 times slower than the published \
                     merging-time fit; the set calibrated together is stripping_alpha = {a}, \
                     stripping_alpha_c_slope = {p}, friction_mass_infall_weight = {w}, \
                     disc_tide_ratio = {d} (docs/methods.md)",
                    self.stripping_alpha_c_slope
                ));
            }
            if self.disc_tide_ratio == Self::default().disc_tide_ratio {
                notes.push(format!(
                    "orbits.disc_tide_ratio = {} is calibrated for the default stripping rate: \
                     with orbits.stripping_alpha_c_slope > 0 subhaloes are stripped harder, \
                     their cores resist the disc, and {d} gives the calibration's target \
                     (40% of the subhaloes with pericentres inside 25 kpc survive; \
                     docs/methods.md)",
                    self.disc_tide_ratio
                ));
            }
        }
        notes
    }

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
