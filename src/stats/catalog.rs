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
    pub host_mass_bin: Vec<u16>,
    pub host_m_vir_msun: Vec<f64>,
    pub host_r_vir_kpc: Vec<f64>,
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
    pub status: Vec<u8>,
    pub t_disrupt_pericentre_gyr: Vec<f64>,
    /// Smallest pericentre, kpc (NaN: none).
    pub r_peri_min_kpc: Vec<f64>,
    pub backsplash: Vec<bool>,
    pub occupied: Vec<bool>,
    pub mstar_msun: Vec<f64>,
    pub m_v: Vec<f64>,
    pub observable: Vec<bool>,
    /// Pre-processing infall times already computed (a compacted catalogue drops the rows the
    /// chain walk needs); empty = compute from the rows.
    pub t_pre_gyr: Vec<f64>,
    /// Backsplash counts per host and shell already computed (compacted catalogue); empty =
    /// count rows.
    pub host_backsplash_count: Vec<Vec<f64>>,
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
        self.host_mass_bin.push(rec.summary.id.mass_bin);
        self.host_m_vir_msun.push(rec.summary.m_vir_msun);
        self.host_r_vir_kpc.push(rec.summary.r_vir_kpc);
        for (s, g) in rec.subhaloes.iter().zip(&rec.galaxies) {
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
        self.status.push(other.status[i]);
        self.t_disrupt_pericentre_gyr
            .push(other.t_disrupt_pericentre_gyr[i]);
        self.r_peri_min_kpc.push(other.r_peri_min_kpc[i]);
        self.backsplash.push(other.backsplash[i]);
        self.occupied.push(other.occupied[i]);
        self.mstar_msun.push(other.mstar_msun[i]);
        self.m_v.push(other.m_v[i]);
        self.observable.push(other.observable[i]);
        self.t_pre_gyr.push(t_pre);
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
            c.host_mass_bin.push(self.host_mass_bin[h]);
            c.host_m_vir_msun.push(self.host_m_vir_msun[h]);
            c.host_r_vir_kpc.push(self.host_r_vir_kpc[h]);
            if !self.host_backsplash_count.is_empty() {
                c.host_backsplash_count
                    .push(self.host_backsplash_count[h].clone());
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

    /// Whether row i is a satellite of a satellite at the end (inside another subhalo).
    pub fn in_subhalo(&self, i: usize) -> bool {
        self.status[i] == SubhaloStatus::InSubhalo as u8
    }
}
