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
    evolve_host_subhaloes, evolve_host_subhaloes_recording, evolve_in_isolated_halo,
    evolve_pair_in_host, evolve_subhalo, integrate_point_mass, integrate_test_particle,
    SubhaloResult, SubhaloStatus,
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
    /// alpha_s of the mass-loss rate for a subhalo of concentration 10 at infall (of every
    /// subhalo when `stripping_alpha_c_slope` is 0).
    pub stripping_alpha: f64,
    /// p in alpha_s(c_acc) = stripping_alpha (c_acc / 10)^(-p), c_acc held within 5-15
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
    /// (`follow::disc_tide_over_density`); 0 = off.
    pub disc_tide_ratio: f64,
    /// Gradual disc-tide losses: at a pericentre where the disc's and bulge's tide is a ratio
    /// q of the subhalo's V_max^2 / R_max^2 below `disc_tide_ratio` (q / disc_tide_ratio =
    /// s < 1), the subhalo keeps 1 - s^k of its bound mass, k this power; 0 = off (the
    /// all-or-nothing closure: nothing lost below the threshold). Our closure
    /// (`follow::disc_tide_over_density`, docs/methods.md).
    pub disc_tide_loss_power: f64,
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
            friction_mass_infall_weight: 0.35,
            stripping: true,
            stripping_alpha: 1.15,
            stripping_alpha_c_slope: 0.5,
            disrupt_bound_fraction: 1e-3,
            disrupt_tidal_radius_over_rs: 0.0,
            pericentre_cut_kpc: 20.0,
            disc_tide_ratio: 1.1,
            disc_tide_loss_power: 1.0,
            central_merge_kpc: 1.0,
            infall_orbits: initial::InfallOrbits::default(),
        }
    }
}

/// The settings calibrated together with the concentration-dependent stripping rate, the
/// defaults (docs/methods.md): `stripping_alpha`, `stripping_alpha_c_slope`,
/// `friction_mass_infall_weight`, `disc_tide_ratio`, `disc_tide_loss_power`. The disc's pair
/// (1.1, power 1) is the default since the gradual losses of 2026-12-05; it keeps the same 40%
/// of the subhaloes with pericentres inside 25 kpc alive as the all-or-nothing pair before it.
pub const BY_CONCENTRATION: (f64, f64, f64, f64, f64) = (1.15, 0.5, 0.35, 1.1, 1.0);

/// The disc's all-or-nothing pair calibrated with the concentration-dependent rate (ratio 0.8,
/// power 0), the default until the gradual losses of 2026-12-05, for comparison with runs made
/// then.
pub const BY_CONCENTRATION_ALL_OR_NOTHING_DISC: (f64, f64) = (0.8, 0.0);

/// The same five settings calibrated together with one stripping rate for every subhalo, the
/// defaults from 2026-12-04 to 2026-12-05 (docs/methods.md), for comparison with runs made
/// then.
pub const SINGLE_RATE: (f64, f64, f64, f64, f64) = (0.75, 0.0, 0.0, 1.2, 0.0);

/// Keys of `OrbitOptions` added after stores began to record the resolved options (2026-12-04),
/// each with the value that reproduces what the code did before the key existed: a store
/// written then lacks them, and must not be read at today's defaults.
pub const KEYS_ADDED_LATER: [(&str, f64); 3] = [
    ("stripping_alpha_c_slope", 0.0),
    ("friction_mass_infall_weight", 0.0),
    ("disc_tide_loss_power", 0.0),
];

impl OrbitOptions {
    /// The options a store recorded (TOML written by the version that grew its hosts): keys
    /// added after that version take the value that reproduces its behaviour
    /// (`KEYS_ADDED_LATER`), not this version's defaults.
    pub fn from_recorded(text: &str) -> Result<Self, toml::de::Error> {
        Self::from_recorded_table(toml::from_str(text)?)
    }

    fn from_recorded_table(mut table: toml::Table) -> Result<Self, toml::de::Error> {
        for (key, before) in KEYS_ADDED_LATER {
            table
                .entry(key.to_string())
                .or_insert(toml::Value::Float(before));
        }
        Self::deserialize(table)
    }

    /// Keys added after stores began to record their options take the values that reproduce
    /// the code before them (`KEYS_ADDED_LATER`): for a store that records no options, whose
    /// version predates every one of those keys.
    pub fn with_later_keys_as_before(self) -> Self {
        let mut table =
            toml::Table::try_from(self).expect("the orbit options serialise to a TOML table");
        for (key, _) in KEYS_ADDED_LATER {
            table.remove(key);
        }
        Self::from_recorded_table(table).expect("the orbit options read back from their table")
    }

    /// What `check` says of settings that mix the calibrated sets, and of gradual disc losses
    /// with a power below 1 (empty: nothing to say). With `stripping_alpha_c_slope` > 0 and
    /// friction on the bound mass alone, children sink into their parents 1.20-1.60 times
    /// slower than the merging-time fit at z = 0. The disc's ratio and power were calibrated
    /// as pairs, each for one stripping rate: 1.1 with power 1 (the default) and 0.8 with
    /// power 0 for the concentration-dependent rate, each keeping 0.40 of the subhaloes with
    /// pericentres inside 25 kpc; 1.2 with power 0 for one rate.
    pub fn calibration_notes(&self) -> Vec<String> {
        let sets = |(a, p, w, d, k): (f64, f64, f64, f64, f64)| {
            format!(
                "stripping_alpha = {a}, stripping_alpha_c_slope = {p}, \
                 friction_mass_infall_weight = {w}, disc_tide_ratio = {d}, \
                 disc_tide_loss_power = {k}"
            )
        };
        let (by_c, single) = (sets(BY_CONCENTRATION), sets(SINGLE_RATE));
        let mut notes = Vec::new();
        let k = self.disc_tide_loss_power;
        if self.stripping && self.disc_tide_ratio > 0.0 && k > 0.0 && k < 1.0 {
            notes.push(format!(
                "orbits.disc_tide_loss_power = {k} is below 1: a pericentre at which the disc's \
                 tide is a fraction s of the threshold strips s^{k} of the bound mass, more than \
                 s itself, so the disc strips at every pericentre however far out (1e-6 of the \
                 threshold strips {:.1e}) and a light partner's disc strips too; the default \
                 power, 1, strips in proportion to the tide (docs/methods.md)",
                1e-6f64.powf(k)
            ));
        }
        let disc = self.disc_tide_ratio;
        // the calibrated pairs: (ratio, power, calibrated with the concentration-dependent rate)
        let pairs = [
            (BY_CONCENTRATION.3, BY_CONCENTRATION.4, true),
            (
                BY_CONCENTRATION_ALL_OR_NOTHING_DISC.0,
                BY_CONCENTRATION_ALL_OR_NOTHING_DISC.1,
                true,
            ),
            (SINGLE_RATE.3, SINGLE_RATE.4, false),
        ];
        if self.stripping {
            if let Some((_, partner, _)) = pairs.iter().find(|p| p.0 == disc && p.1 != k) {
                notes.push(format!(
                    "orbits.disc_tide_ratio = {disc} was calibrated with \
                     orbits.disc_tide_loss_power = {partner}, not {k}: the disc then destroys \
                     or strips the wrong share of the subhaloes that pass near it (the \
                     calibration's target: 40% of those with pericentres inside 25 kpc \
                     survive); the calibrated pairs are 1.1 with power 1 (the default) and 0.8 \
                     with power 0 for the concentration-dependent stripping rate, 1.2 with \
                     power 0 for one rate (docs/methods.md)"
                ));
            }
        }
        if !(self.stripping && self.friction) {
            return notes;
        }
        let by_concentration = self.stripping_alpha_c_slope > 0.0;
        if by_concentration && self.friction_mass_infall_weight == 0.0 {
            notes.push(format!(
                "orbits.stripping_alpha_c_slope = {} with friction on the bound mass alone \
                 (orbits.friction_mass_infall_weight = 0): satellites of satellites then sink \
                 into their parents 1.2-1.6 times slower than the published merging-time fit; \
                 the set calibrated together is {by_c} (the defaults; docs/methods.md)",
                self.stripping_alpha_c_slope
            ));
        }
        if !by_concentration && self.friction_mass_infall_weight > 0.0 {
            notes.push(format!(
                "orbits.friction_mass_infall_weight = {} was calibrated with the \
                 concentration-dependent stripping rate (orbits.stripping_alpha_c_slope > 0), \
                 not with one rate for every subhalo; the set calibrated with one rate is \
                 {single} (docs/methods.md)",
                self.friction_mass_infall_weight
            ));
        }
        if pairs
            .iter()
            .any(|p| p.0 == disc && p.1 == k && p.2 != by_concentration)
        {
            let (this, other) = if by_concentration {
                ("one stripping rate for every subhalo", &by_c)
            } else {
                ("the concentration-dependent stripping rate", &single)
            };
            notes.push(format!(
                "orbits.disc_tide_ratio = {disc} with orbits.disc_tide_loss_power = {k} is \
                 calibrated for {this}, not for the rate set here: the disc then destroys the \
                 wrong share of the subhaloes that pass near it (the calibration's target: 40% \
                 of those with pericentres inside 25 kpc survive); the set calibrated for the \
                 rate set here is {other} (docs/methods.md)"
            ));
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
            "disc_tide_loss_power",
            self.disc_tide_loss_power,
            (0.0..=100.0).contains(&self.disc_tide_loss_power),
            "must be in [0, 100] (0 = off: only the all-or-nothing disc closure)",
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The defaults are the set calibrated with the concentration-dependent stripping rate
    /// (`BY_CONCENTRATION`, which `check`'s notes name as the defaults), and `SINGLE_RATE`
    /// differs from it in every key it names.
    #[test]
    fn defaults_are_the_calibrated_set() {
        let o = OrbitOptions::default();
        assert_eq!(
            (
                o.stripping_alpha,
                o.stripping_alpha_c_slope,
                o.friction_mass_infall_weight,
                o.disc_tide_ratio,
                o.disc_tide_loss_power
            ),
            BY_CONCENTRATION
        );
        let (a, p, w, d, k) = SINGLE_RATE;
        let (a0, p0, w0, d0, k0) = BY_CONCENTRATION;
        assert!(a != a0 && p != p0 && w != w0 && d != d0 && k != k0);
        assert!(o.calibration_notes().is_empty());
    }

    /// A store's recorded options without the keys added later read as the code behaved
    /// then (one stripping rate, friction on the bound mass), not at today's defaults.
    #[test]
    fn recorded_options_without_later_keys() {
        let today = OrbitOptions::default();
        let text = toml::to_string(&today).unwrap();
        assert_eq!(OrbitOptions::from_recorded(&text).unwrap(), today);
        let older = text
            .lines()
            .filter(|l| !KEYS_ADDED_LATER.iter().any(|(k, _)| l.starts_with(k)))
            .collect::<Vec<_>>()
            .join("\n");
        assert_ne!(older, text);
        let old = OrbitOptions::from_recorded(&older).unwrap();
        assert_eq!(old.stripping_alpha_c_slope, 0.0);
        assert_eq!(old.friction_mass_infall_weight, 0.0);
        assert_eq!(old.disc_tide_loss_power, 0.0);
        assert_ne!(today.stripping_alpha_c_slope, 0.0);
        assert_ne!(today.friction_mass_infall_weight, 0.0);
        assert_eq!(old.disc_tide_ratio, today.disc_tide_ratio);
        assert!(OrbitOptions::from_recorded("rtol = \"x\"").is_err());
        // a store that records no options at all: every later key as before it, the rest kept
        let changed = OrbitOptions {
            stripping_alpha: 0.9,
            ..today
        }
        .with_later_keys_as_before();
        assert_eq!(
            changed,
            OrbitOptions {
                stripping_alpha: 0.9,
                ..old
            }
        );
    }
}
