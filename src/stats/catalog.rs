//! The flat view of a run that the statistics work on: one row per subhalo with the columns
//! the tests need, and one row per host. Built from in-memory host records or read from a
//! run store, so `retinue infall` can re-run the tests without re-synthesising.

use crate::orbits::SubhaloStatus;
use crate::synth::HostRecord;

/// Columns of the subhalo table used by the tests.
#[derive(Debug, Clone, Default)]
pub struct Catalog {
    // hosts
    pub host_id: Vec<u64>,
    pub host_cosmology: Vec<u16>,
    /// The host's grid cell beside its cosmology (`cells::cell_code`: host-mass bin,
    /// environment, pair member).
    pub host_cell: Vec<u16>,
    pub host_m_vir_msun: Vec<f64>,
    pub host_r_vir_kpc: Vec<f64>,
    /// Hosts of a pair (NaN for isolated hosts): the partner's distance today (kpc), its
    /// virial radius (kpc) and the pair region's radius about the barycentre (kpc).
    pub host_pair_separation_kpc: Vec<f64>,
    pub host_partner_r_vir_kpc: Vec<f64>,
    pub host_region_radius_kpc: Vec<f64>,
    /// Hosts of a pair: the partner's virial mass today, Msun (NaN for isolated hosts).
    pub host_partner_m_vir_msun: Vec<f64>,
    /// Subhalo rows of host h are offset[h]..offset[h+1].
    pub offset: Vec<usize>,
    // subhaloes
    pub branch: Vec<u32>,
    pub parent_branch: Vec<u32>,
    pub order: Vec<u16>,
    pub m_peak_msun: Vec<f64>,
    pub m_bound_msun: Vec<f64>,
    pub t_infall_gyr: Vec<f64>,
    pub m_host_at_infall_msun: Vec<f64>,
    pub t_first_host_infall_gyr: Vec<f64>,
    pub t_last_host_infall_gyr: Vec<f64>,
    pub r_kpc: Vec<f64>,
    /// Galactocentric radial velocity today, km/s.
    pub v_r_kms: Vec<f64>,
    /// Galactocentric tangential speed today, km/s (empty or short in catalogues built by
    /// hand: NaN).
    pub v_t_kms: Vec<f64>,
    pub status: Vec<u8>,
    pub t_disrupt_pericentre_gyr: Vec<f64>,
    /// Smallest pericentre, kpc (NaN: none).
    pub r_peri_min_kpc: Vec<f64>,
    pub backsplash: Vec<bool>,
    pub occupied: Vec<bool>,
    pub mstar_msun: Vec<f64>,
    pub m_v: Vec<f64>,
    pub observable: Vec<bool>,
    /// Hosts of a pair (NaN / false for isolated hosts): distance today from the partner's
    /// centre and from the pair's barycentre (kpc; the barycentre of the two virial masses),
    /// and whether it was ever inside the partner's virial radius.
    pub r_partner_kpc: Vec<f64>,
    pub r_bary_kpc: Vec<f64>,
    pub once_in_partner: Vec<bool>,
    /// Pre-processing infall times already computed (a compacted catalogue drops the rows the
    /// chain walk needs); empty = compute from the rows.
    pub t_pre_gyr: Vec<f64>,
    /// Backsplash counts per host and shell already computed (compacted catalogue); empty =
    /// count rows.
    pub host_backsplash_count: Vec<Vec<f64>>,
    /// Field dwarfs of the pair region per host already counted (compacted catalogue; empty
    /// counts for isolated hosts); empty = count rows (`stats::pairs::region_counts`).
    pub host_pair_region_count: Vec<super::pairs::RegionCounts>,
    /// Each host's census for the comparison with the Milky Way's satellites
    /// (`Catalog::census_from_rows`) already computed (compacted catalogue); empty = compute
    /// from the rows.
    pub host_census: Vec<HostMilkyWayCensus>,
}

/// One host's numbers for the comparison with the Milky Way's satellite census: satellites
/// (galaxy-hosting subhaloes alive at the end, at their own distance from the host's centre)
/// brighter than M_V = 0 and M_V = -8 within 300 kpc, the median distance (kpc) of the latter
/// when there are three or more (NaN otherwise), and whether one as bright as the Milky Way's
/// second brightest (`MW_SECOND_BRIGHTEST_M_V`) lies within 150 kpc; and the velocity sums of
/// the satellites brighter than M_V = 0 in each shell of `ANISOTROPY_SHELLS_KPC`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostMilkyWayCensus {
    pub n_mv0: f64,
    pub n_mv8: f64,
    pub mv8_median_r_kpc: f64,
    pub bright_pair: bool,
    pub mv0_shells: [VelocitySums; N_SHELLS],
}

/// The number of shells of `ANISOTROPY_SHELLS_KPC`.
pub const N_SHELLS: usize = 4;

/// The shells (kpc from the host's centre) in which the census measures the velocity
/// anisotropy of the satellites brighter than M_V = 0: inside 30 kpc, where the Milky Way's
/// satellites move on tangential orbits, out to 300 kpc, where they are radial (Riley et al.
/// 2019, abstract: beta about -2 at 20 kpc rising to about 0.5 at 200 kpc).
pub const ANISOTROPY_SHELLS_KPC: [(f64, f64); N_SHELLS] =
    [(0.0, 30.0), (30.0, 50.0), (50.0, 100.0), (100.0, 300.0)];

/// Sums over the satellites of one shell from which the velocity anisotropy follows; sums of
/// several hosts add.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct VelocitySums {
    pub n: f64,
    /// Sums of v_r (km/s), v_r^2 and v_t^2 ((km/s)^2).
    pub v_r: f64,
    pub v_r2: f64,
    pub v_t2: f64,
}

impl VelocitySums {
    /// Add one satellite (radial velocity and tangential speed, km/s).
    pub fn add(&mut self, v_r: f64, v_t: f64) {
        self.n += 1.0;
        self.v_r += v_r;
        self.v_r2 += v_r * v_r;
        self.v_t2 += v_t * v_t;
    }

    /// Componentwise a + sign b (sign 1 to pool, -1 to take one host out again).
    pub fn combined(self, b: Self, sign: f64) -> Self {
        Self {
            n: self.n + sign * b.n,
            v_r: self.v_r + sign * b.v_r,
            v_r2: self.v_r2 + sign * b.v_r2,
            v_t2: self.v_t2 + sign * b.v_t2,
        }
    }

    /// The velocity anisotropy beta = 1 - sigma_t^2 / (2 sigma_r^2) (Binney & Tremaine 2008,
    /// eq. 4.61, equation number recalled; the two tangential dispersions together in
    /// sigma_t^2): sigma_r^2 about the shell's mean v_r, sigma_t^2 the mean of v_t^2 (a net
    /// rotation, if any, counts as dispersion). NaN with fewer than two satellites or no
    /// radial dispersion.
    pub fn beta(&self) -> f64 {
        if self.n < 2.0 {
            return f64::NAN;
        }
        let sigma_r2 = self.v_r2 / self.n - (self.v_r / self.n).powi(2);
        if sigma_r2 > 0.0 {
            1.0 - self.v_t2 / self.n / (2.0 * sigma_r2)
        } else {
            f64::NAN
        }
    }
}

/// The magnitude of the Milky Way's second brightest satellite, M_V = -16.8 (McConnachie 2012
/// as compiled on a public encyclopedia page, read 2026-12-05).
pub const MW_SECOND_BRIGHTEST_M_V: f64 = -16.8;

/// One object's place in the Milky Way census (`HostMilkyWayCensus`): the one rule by which
/// the report's census (`Catalog::census_from_rows`) and the validation's (`stats::census`)
/// count satellites.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CensusClass {
    /// Brighter than M_V = 0 within 300 kpc of the host's centre.
    pub mv0_within_300kpc: bool,
    /// Brighter than M_V = -8 within 300 kpc.
    pub mv8_within_300kpc: bool,
    /// As bright as the Milky Way's second brightest satellite (`MW_SECOND_BRIGHTEST_M_V`)
    /// within 150 kpc.
    pub second_brightest_within_150kpc: bool,
}

impl CensusClass {
    /// The classes of an object at distance `r_kpc` from the host's centre with magnitude
    /// `m_v`; None unless it is a satellite: it hosts a galaxy, is alive at the end and has a
    /// position (a satellite of a satellite counts at its own distance).
    pub fn of(occupied: bool, alive: bool, r_kpc: f64, m_v: f64) -> Option<Self> {
        (occupied && alive && r_kpc.is_finite()).then(|| Self {
            mv0_within_300kpc: r_kpc < 300.0 && m_v < 0.0,
            mv8_within_300kpc: r_kpc < 300.0 && m_v < -8.0,
            second_brightest_within_150kpc: r_kpc < 150.0 && m_v <= MW_SECOND_BRIGHTEST_M_V,
        })
    }
}

/// Element i of a pair column, NaN where the column is empty or short (catalogues built by
/// hand, or hosts read before the pair columns existed: isolated).
pub(crate) fn pair_value(v: &[f64], i: usize) -> f64 {
    v.get(i).copied().unwrap_or(f64::NAN)
}

/// The shell of `ANISOTROPY_SHELLS_KPC` that holds distance r (kpc), if any.
pub fn anisotropy_shell(r: f64) -> Option<usize> {
    ANISOTROPY_SHELLS_KPC
        .iter()
        .position(|&(r0, r1)| r >= r0 && r < r1)
}

fn distance(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

impl Catalog {
    pub fn n_hosts(&self) -> usize {
        self.host_id.len()
    }

    pub fn n_subhaloes(&self) -> usize {
        self.branch.len()
    }

    /// Rows of host h.
    pub fn rows(&self, h: usize) -> std::ops::Range<usize> {
        self.offset[h]..self.offset[h + 1]
    }

    /// Append one synthesised host.
    pub fn push_host(&mut self, global_index: u64, rec: &HostRecord) {
        if self.offset.is_empty() {
            self.offset.push(0);
        }
        self.host_id.push(global_index);
        self.host_cosmology.push(rec.summary.id.cosmology);
        let id = rec.summary.id;
        self.host_cell.push(super::cells::cell_code(
            id.mass_bin,
            id.environment,
            id.member,
        ));
        self.host_m_vir_msun.push(rec.summary.m_vir_msun);
        self.host_r_vir_kpc.push(rec.summary.r_vir_kpc);
        let pair = rec.pair.as_ref();
        self.host_pair_separation_kpc
            .push(pair.map_or(f64::NAN, |p| p.separation_kpc));
        self.host_partner_r_vir_kpc
            .push(pair.map_or(f64::NAN, |p| p.partner_r_vir_kpc));
        self.host_region_radius_kpc
            .push(pair.map_or(f64::NAN, |p| p.region_radius_kpc));
        self.host_partner_m_vir_msun
            .push(pair.map_or(f64::NAN, |p| p.partner_m_vir_msun));
        // the barycentre in this host's frame
        let bary = pair.map(|p| {
            let w = p.partner_m_vir_msun / (p.partner_m_vir_msun + rec.summary.m_vir_msun);
            p.partner_pos_kpc.map(|c| w * c)
        });
        for (s, g) in rec.subhaloes.iter().zip(&rec.galaxies) {
            self.r_partner_kpc.push(s.r_partner_kpc);
            self.r_bary_kpc.push(match bary {
                Some(b) => distance(s.pos_kpc, b),
                None => f64::NAN,
            });
            self.once_in_partner
                .push(s.t_first_partner_infall_gyr.is_finite());
            self.branch.push(s.branch);
            self.parent_branch.push(s.parent_branch);
            self.order.push(s.order);
            self.m_peak_msun.push(s.m_peak_msun);
            self.m_bound_msun.push(s.m_bound_msun);
            self.t_infall_gyr.push(s.t_infall_gyr);
            self.m_host_at_infall_msun.push(s.m_host_at_infall_msun);
            self.t_first_host_infall_gyr.push(s.t_first_host_infall_gyr);
            self.t_last_host_infall_gyr.push(s.t_last_host_infall_gyr);
            self.r_kpc.push(s.r_kpc);
            let (x, v) = (s.pos_kpc, s.vel_kms);
            let vr = if s.r_kpc > 0.0 {
                (x[0] * v[0] + x[1] * v[1] + x[2] * v[2]) / s.r_kpc
            } else {
                f64::NAN
            };
            self.v_r_kms.push(vr);
            let v2 = v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
            // (NaN stays NaN: f64::max would turn it into 0)
            self.v_t_kms.push(if vr.is_finite() {
                (v2 - vr * vr).max(0.0).sqrt()
            } else {
                f64::NAN
            });
            self.status.push(s.status as u8);
            self.t_disrupt_pericentre_gyr
                .push(s.t_disrupt_pericentre_gyr);
            self.r_peri_min_kpc.push(s.r_peri_min_kpc);
            self.backsplash.push(s.backsplash);
            self.occupied.push(g.occupied);
            self.mstar_msun.push(g.mstar_msun);
            self.m_v.push(g.m_v);
            self.observable.push(g.observable);
        }
        self.offset.push(self.branch.len());
    }

    /// Append row i of `other` (host columns are handled by the caller).
    pub fn push_row_from(&mut self, other: &Catalog, i: usize, t_pre: f64) {
        self.branch.push(other.branch[i]);
        self.parent_branch.push(other.parent_branch[i]);
        self.order.push(other.order[i]);
        self.m_peak_msun.push(other.m_peak_msun[i]);
        self.m_bound_msun.push(other.m_bound_msun[i]);
        self.t_infall_gyr.push(other.t_infall_gyr[i]);
        self.m_host_at_infall_msun
            .push(other.m_host_at_infall_msun[i]);
        self.t_first_host_infall_gyr
            .push(other.t_first_host_infall_gyr[i]);
        self.t_last_host_infall_gyr
            .push(other.t_last_host_infall_gyr[i]);
        self.r_kpc.push(other.r_kpc[i]);
        self.v_r_kms.push(other.v_r_kms[i]);
        self.v_t_kms.push(pair_value(&other.v_t_kms, i));
        self.status.push(other.status[i]);
        self.t_disrupt_pericentre_gyr
            .push(other.t_disrupt_pericentre_gyr[i]);
        self.r_peri_min_kpc.push(other.r_peri_min_kpc[i]);
        self.backsplash.push(other.backsplash[i]);
        self.occupied.push(other.occupied[i]);
        self.mstar_msun.push(other.mstar_msun[i]);
        self.m_v.push(other.m_v[i]);
        self.observable.push(other.observable[i]);
        // (catalogues built by hand may leave the pair columns empty: isolated)
        let nan = |v: &[f64]| pair_value(v, i);
        self.r_partner_kpc.push(nan(&other.r_partner_kpc));
        self.r_bary_kpc.push(nan(&other.r_bary_kpc));
        self.once_in_partner
            .push(other.once_in_partner.get(i).copied().unwrap_or(false));
        self.t_pre_gyr.push(t_pre);
    }

    /// Append host h's pair columns from `other`.
    pub fn push_pair_host_from(&mut self, other: &Catalog, h: usize) {
        let nan = |v: &[f64]| pair_value(v, h);
        self.host_pair_separation_kpc
            .push(nan(&other.host_pair_separation_kpc));
        self.host_partner_r_vir_kpc
            .push(nan(&other.host_partner_r_vir_kpc));
        self.host_region_radius_kpc
            .push(nan(&other.host_region_radius_kpc));
        self.host_partner_m_vir_msun
            .push(nan(&other.host_partner_m_vir_msun));
    }

    /// Hosts [h0, h1) as a catalogue of their own.
    pub fn slice_hosts(&self, h0: usize, h1: usize) -> Catalog {
        self.select_hosts(h0..h1)
    }

    /// The given hosts (in the order given) as a catalogue of their own.
    pub fn select_hosts(&self, hosts: impl IntoIterator<Item = usize>) -> Catalog {
        let mut c = Catalog {
            offset: vec![0],
            ..Default::default()
        };
        for h in hosts {
            c.host_id.push(self.host_id[h]);
            c.host_cosmology.push(self.host_cosmology[h]);
            c.host_cell.push(self.host_cell[h]);
            c.host_m_vir_msun.push(self.host_m_vir_msun[h]);
            c.host_r_vir_kpc.push(self.host_r_vir_kpc[h]);
            c.push_pair_host_from(self, h);
            if !self.host_backsplash_count.is_empty() {
                c.host_backsplash_count
                    .push(self.host_backsplash_count[h].clone());
            }
            if !self.host_pair_region_count.is_empty() {
                c.host_pair_region_count
                    .push(self.host_pair_region_count[h].clone());
            }
            if !self.host_census.is_empty() {
                c.host_census.push(self.host_census[h]);
            }
            for i in self.rows(h) {
                let pre = self.t_pre_gyr.get(i).copied().unwrap_or(f64::NAN);
                c.push_row_from(self, i, pre);
            }
            c.offset.push(c.branch.len());
        }
        if self.t_pre_gyr.is_empty() {
            c.t_pre_gyr.clear();
        }
        c
    }

    /// Whether row i is still a distinct bound object at the end: orbiting the host, or inside
    /// another subhalo (not disrupted, not merged).
    pub fn alive(&self, i: usize) -> bool {
        SubhaloStatus::from_code(self.status[i]).is_some_and(|s| s.alive())
    }

    /// Host h's census (`HostMilkyWayCensus`): the precomputed one of a compacted catalogue,
    /// else counted from its rows (which must then be all of its rows).
    pub fn milky_way_census(&self, h: usize) -> HostMilkyWayCensus {
        if self.host_census.len() == self.n_hosts() {
            return self.host_census[h];
        }
        self.census_from_rows(h)
    }

    /// Host h's census counted from its rows.
    pub fn census_from_rows(&self, h: usize) -> HostMilkyWayCensus {
        let (mut n_mv0, mut r8, mut bright_pair) = (0.0, Vec::new(), false);
        let mut mv0_shells = [VelocitySums::default(); N_SHELLS];
        for i in self.rows(h) {
            let r = self.r_kpc[i];
            let Some(class) = CensusClass::of(self.occupied[i], self.alive(i), r, self.m_v[i])
            else {
                continue;
            };
            if class.mv0_within_300kpc {
                n_mv0 += 1.0;
                let v_t = pair_value(&self.v_t_kms, i);
                let v_r = self.v_r_kms[i];
                if let Some(k) = anisotropy_shell(r).filter(|_| v_t.is_finite() && v_r.is_finite())
                {
                    mv0_shells[k].add(v_r, v_t);
                }
            }
            if class.mv8_within_300kpc {
                r8.push(r);
            }
            bright_pair |= class.second_brightest_within_150kpc;
        }
        r8.sort_by(f64::total_cmp);
        HostMilkyWayCensus {
            n_mv0,
            n_mv8: r8.len() as f64,
            mv8_median_r_kpc: if r8.len() >= 3 {
                super::intervals::percentile(&r8, 0.5)
            } else {
                f64::NAN
            },
            bright_pair,
            mv0_shells,
        }
    }

    /// Whether row i is a satellite of a satellite at the end (inside another subhalo).
    pub fn in_subhalo(&self, i: usize) -> bool {
        self.status[i] == SubhaloStatus::InSubhalo as u8
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The census rule at its edges: 300 and 150 kpc and M_V = 0 and -8 are open bounds, the
    /// Milky Way's second brightest magnitude is included, and only galaxy-hosting objects
    /// alive at the end with a position count.
    #[test]
    fn census_class_edges() {
        let c = |occ, alive, r, m_v| CensusClass::of(occ, alive, r, m_v);
        assert_eq!(c(false, true, 50.0, -10.0), None);
        assert_eq!(c(true, false, 50.0, -10.0), None);
        assert_eq!(c(true, true, f64::NAN, -10.0), None);
        let k = c(true, true, 299.9, -8.01).unwrap();
        assert!(k.mv0_within_300kpc && k.mv8_within_300kpc && !k.second_brightest_within_150kpc);
        let k = c(true, true, 300.0, -20.0).unwrap();
        assert!(!k.mv0_within_300kpc && !k.mv8_within_300kpc && !k.second_brightest_within_150kpc);
        let k = c(true, true, 100.0, -8.0).unwrap();
        assert!(k.mv0_within_300kpc && !k.mv8_within_300kpc);
        let k = c(true, true, 100.0, 0.0).unwrap();
        assert!(!k.mv0_within_300kpc);
        let k = c(true, true, 149.9, MW_SECOND_BRIGHTEST_M_V).unwrap();
        assert!(k.second_brightest_within_150kpc);
        let k = c(true, true, 150.0, MW_SECOND_BRIGHTEST_M_V).unwrap();
        assert!(!k.second_brightest_within_150kpc && k.mv8_within_300kpc);
    }
}
