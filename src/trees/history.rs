//! Quantities derived from one merger tree: the main branch and its mass accretion history,
//! formation times, and every accretion of every order with the record of where it fell
//! first (for pre-processing and group-infall statistics).
//!
//! Conventions: the infall time of a branch is its merger time in the tree, the midpoint in
//! the clock w = delta_c/D between its first node and the node it joins (not snapped to an
//! output time). Its infall mass is the mass of its first node. In an EPS tree a branch's
//! mass never decreases toward later times, so its peak mass is reached at infall; the peak
//! is still computed over the branch's nodes so that the rule holds by construction.

use super::tree::{MergerTree, NONE};

/// One branch merging into another, of any order.
#[derive(Debug, Clone, PartialEq)]
pub struct Accretion {
    /// Branch id in the tree.
    pub branch: u32,
    /// 1: merges into the main branch; 2: into a first-order branch; ...
    pub order: u16,
    /// The branch it merges into (0 = the main branch).
    pub into_branch: u32,
    /// Merger (infall) time and redshift.
    pub t_infall_gyr: f64,
    pub z_infall: f64,
    /// Mass just before the merger, Msun.
    pub m_infall_msun: f64,
    /// Mass of the halo it fell into, at the merger, Msun.
    pub m_host_at_infall_msun: f64,
    /// Largest mass along the branch, Msun, and when.
    pub m_peak_msun: f64,
    pub t_peak_gyr: f64,
    /// The first-order branch through which it reaches the main branch (itself if order 1).
    pub group: u32,
    /// When that group enters the main branch (= first infall into the host).
    pub t_host_infall_gyr: f64,
    pub z_host_infall: f64,
}

/// Main branch, formation times and accretions of one tree.
#[derive(Debug, Clone, Default)]
pub struct HostHistory {
    /// Main-branch mass at each output time of the tree (0 once below resolution), Msun.
    pub mah_msun: Vec<f64>,
    pub output_z: Vec<f64>,
    pub output_t_gyr: Vec<f64>,
    /// Main-branch nodes from the root back in time.
    pub main_nodes: Vec<u32>,
    /// Half-mass formation time (main branch first reached M0/2), interpolated in ln M.
    pub t_half_gyr: f64,
    pub z_half: f64,
    /// Time the main branch first reached 4% of M0 (NaN if before the tree starts).
    pub t_04_gyr: f64,
    /// Accretions of every order, in branch order.
    pub accretions: Vec<Accretion>,
    /// Index into `accretions` of each branch (usize::MAX for branch 0).
    branch_to_acc: Vec<usize>,
}

impl HostHistory {
    pub fn from_tree(tree: &MergerTree) -> Self {
        let mut h = HostHistory {
            output_z: tree.output_z.clone(),
            output_t_gyr: tree.output_t_gyr.clone(),
            ..Default::default()
        };
        h.main_nodes = tree.branch_nodes(0).collect();
        // mass accretion history on the output grid
        h.mah_msun = vec![0.0; tree.output_w.len()];
        for &n in &h.main_nodes {
            let w = tree.w[n as usize];
            if let Ok(k) = tree
                .output_w
                .binary_search_by(|x| x.partial_cmp(&w).unwrap())
            {
                h.mah_msun[k] = tree.mass_msun[n as usize];
            }
        }
        let m0 = tree.mass_msun[0];
        let (t, z) = crossing(tree, &h.main_nodes, 0.5 * m0);
        h.t_half_gyr = t;
        h.z_half = z;
        h.t_04_gyr = crossing(tree, &h.main_nodes, 0.04 * m0).0;

        // accretions
        let nb = tree.n_branches();
        h.branch_to_acc = vec![usize::MAX; nb];
        // group (first-order ancestor) of each branch; branches are created after the branch
        // they merge into, so one pass in branch order resolves the chain.
        let mut group = vec![0u32; nb];
        for b in 1..nb as u32 {
            let into_node = tree.merges_into(b);
            let into = tree.branch[into_node as usize];
            group[b as usize] = if into == 0 { b } else { group[into as usize] };
        }
        for b in 1..nb as u32 {
            let first = tree.branch_first[b as usize];
            let into_node = tree.merges_into(b);
            let into = tree.branch[into_node as usize];
            let (mut m_peak, mut t_peak) = (0.0, f64::NAN);
            for n in tree.branch_nodes(b) {
                if tree.mass_msun[n as usize] > m_peak {
                    m_peak = tree.mass_msun[n as usize];
                    t_peak = tree.t_gyr[n as usize];
                }
            }
            let g = group[b as usize];
            // the halo it fell into, before the merger: the main progenitor of the node it
            // merged into (that node's own mass includes this branch and the step's smooth
            // accretion)
            let mp = tree.main_progenitor[into_node as usize];
            let m_into = if mp != super::tree::NONE {
                tree.mass_msun[mp as usize]
            } else {
                tree.mass_msun[into_node as usize] - tree.mass_msun[first as usize]
            };
            h.branch_to_acc[b as usize] = h.accretions.len();
            h.accretions.push(Accretion {
                branch: b,
                order: tree.branch_order[b as usize],
                into_branch: into,
                t_infall_gyr: tree.branch_merge_t_gyr[b as usize],
                z_infall: tree.branch_merge_z[b as usize],
                m_infall_msun: tree.mass_msun[first as usize],
                m_host_at_infall_msun: m_into,
                m_peak_msun: m_peak,
                t_peak_gyr: t_peak,
                group: g,
                t_host_infall_gyr: tree.branch_merge_t_gyr[g as usize],
                z_host_infall: tree.branch_merge_z[g as usize],
            });
        }
        h
    }

    /// Replace the branch -> accretion index map (for histories assembled by hand).
    pub fn set_branch_index(&mut self, map: Vec<usize>) {
        self.branch_to_acc = map;
    }

    /// Index into `accretions` of branch b (None for the main branch).
    pub fn accretion_index(&self, b: u32) -> Option<usize> {
        self.branch_to_acc
            .get(b as usize)
            .copied()
            .filter(|&i| i != usize::MAX)
    }

    /// The accretion record of branch b (None for the main branch).
    pub fn accretion_of(&self, b: u32) -> Option<&Accretion> {
        self.branch_to_acc
            .get(b as usize)
            .and_then(|&i| self.accretions.get(i))
    }

    /// First-order accretions (subhaloes falling straight into the main branch).
    pub fn first_order(&self) -> impl Iterator<Item = &Accretion> {
        self.accretions.iter().filter(|a| a.order == 1)
    }

    /// Accretions that reached the main branch inside group g (including g itself).
    pub fn group_members(&self, g: u32) -> impl Iterator<Item = &Accretion> {
        self.accretions.iter().filter(move |a| a.group == g)
    }
}

/// Mass (Msun) of branch b at redshift z: its nodes walked back in time from its first (the
/// one that merges), interpolated linearly in ln M against z between the two nodes around z;
/// its first node's mass if z is after that node. Beyond its earliest node the branch has
/// one more sample, the oldest state the sampler saw above the resolution
/// (`MergerTree::branch_oldest_*`, between output times); z between the two is interpolated
/// the same way. 0 if the branch does not reach back to z (it was below the resolution then).
pub fn branch_mass_at_z(tree: &MergerTree, b: u32, z: f64) -> f64 {
    let lerp = |z0: f64, m0: f64, z1: f64, m1: f64| {
        let f = (z - z0) / (z1 - z0);
        (m0.ln() * (1.0 - f) + m1.ln() * f).exp()
    };
    let mut prev: Option<usize> = None;
    for n in tree.branch_nodes(b) {
        let n = n as usize;
        if tree.z[n] >= z {
            return match prev {
                None => tree.mass_msun[n],
                Some(p) => lerp(tree.z[p], tree.mass_msun[p], tree.z[n], tree.mass_msun[n]),
            };
        }
        prev = Some(n);
    }
    let (zo, mo) = (
        tree.branch_oldest_z[b as usize],
        tree.branch_oldest_msun[b as usize],
    );
    match prev {
        Some(p) if zo >= z && zo > tree.z[p] => lerp(tree.z[p], tree.mass_msun[p], zo, mo),
        _ => 0.0,
    }
}

/// Time (and redshift) at which the main branch, walked back from the root, first drops
/// below `m`; interpolated linearly in ln M against cosmic time between the two nodes.
fn crossing(tree: &MergerTree, main: &[u32], m: f64) -> (f64, f64) {
    for pair in main.windows(2) {
        let (a, b) = (pair[0] as usize, pair[1] as usize);
        if tree.mass_msun[b] < m {
            let (la, lb, lm) = (tree.mass_msun[a].ln(), tree.mass_msun[b].ln(), m.ln());
            let f = (la - lm) / (la - lb);
            let t = tree.t_gyr[a] + f * (tree.t_gyr[b] - tree.t_gyr[a]);
            let z = tree.z[a] + f * (tree.z[b] - tree.z[a]);
            return (t, z);
        }
    }
    let _ = NONE;
    (f64::NAN, f64::NAN)
}
