//! The flat merger-tree store: struct of arrays, nodes indexed by `u32`.
//!
//! Node 0 is the root (the host at z_final). A node's progenitors form a linked list that
//! starts at `main_progenitor[d]` (the most massive progenitor) and continues through
//! `next_sibling`. Each branch is a chain of main progenitors; `branch_first[b]` is its latest
//! node. A branch other than branch 0 merges into the node `descendant[branch_first[b]]`.
//! Nodes sit at output times and at merger events; between consecutive nodes of a branch its
//! mass changes only by smooth (unresolved) accretion.

use crate::error::InvalidValue;

/// No node.
pub const NONE: u32 = u32::MAX;

/// A merger tree, struct of arrays.
#[derive(Debug, Clone, Default)]
pub struct MergerTree {
    pub mass_msun: Vec<f64>,
    /// Excursion-set clock w = delta_c / D (grows toward the past).
    pub w: Vec<f64>,
    pub t_gyr: Vec<f64>,
    pub z: Vec<f64>,
    pub descendant: Vec<u32>,
    pub main_progenitor: Vec<u32>,
    pub next_sibling: Vec<u32>,
    pub branch: Vec<u32>,
    /// Mass gained by smooth (unresolved) accretion since the node's progenitors, Msun; for
    /// a node without progenitors, its whole mass. Tracked step by step by the sampler.
    pub smooth_msun: Vec<f64>,
    /// Latest node of each branch.
    pub branch_first: Vec<u32>,
    /// Merger time of each branch (midpoint in w between its first node and the node it
    /// merges into), as w, cosmic time and redshift; NaN for branch 0.
    pub branch_merge_w: Vec<f64>,
    pub branch_merge_t_gyr: Vec<f64>,
    pub branch_merge_z: Vec<f64>,
    /// Order: 0 for the main branch, 1 + order of the branch it merges into.
    pub branch_order: Vec<u16>,
    /// The oldest state of each branch that the sampler saw above the resolution, as w,
    /// redshift and mass (Msun): its last step before it fell below the resolution (or its
    /// state at z_max). Between output times a branch has no nodes, so this can lie beyond
    /// (earlier than) its earliest node: its mass at a redshift there is interpolated between
    /// the two (`history::branch_mass_at_z`).
    pub branch_oldest_w: Vec<f64>,
    pub branch_oldest_z: Vec<f64>,
    pub branch_oldest_msun: Vec<f64>,
    /// Mass resolution the tree was built with, Msun.
    pub m_resolution_msun: f64,
    /// Output times (w, increasing = toward the past).
    pub output_w: Vec<f64>,
    pub output_z: Vec<f64>,
    pub output_t_gyr: Vec<f64>,
    /// Proposals whose acceptance probability exceeded 1 (a PCH08 bound violation; counted
    /// and clipped). Zero for CDM spectra.
    pub bound_violations: u64,
}

impl MergerTree {
    pub fn clear(&mut self) {
        self.mass_msun.clear();
        self.w.clear();
        self.t_gyr.clear();
        self.z.clear();
        self.descendant.clear();
        self.main_progenitor.clear();
        self.next_sibling.clear();
        self.branch.clear();
        self.smooth_msun.clear();
        self.branch_first.clear();
        self.branch_merge_w.clear();
        self.branch_merge_t_gyr.clear();
        self.branch_merge_z.clear();
        self.branch_order.clear();
        self.branch_oldest_w.clear();
        self.branch_oldest_z.clear();
        self.branch_oldest_msun.clear();
        self.output_w.clear();
        self.output_z.clear();
        self.output_t_gyr.clear();
        self.bound_violations = 0;
    }

    pub fn n_nodes(&self) -> usize {
        self.mass_msun.len()
    }

    pub fn n_branches(&self) -> usize {
        self.branch_first.len()
    }

    /// Append a node (time fields filled later by the builder).
    pub(crate) fn push_node(&mut self, mass: f64, w: f64, descendant: u32, branch: u32) -> u32 {
        let id = self.mass_msun.len() as u32;
        self.mass_msun.push(mass);
        self.w.push(w);
        self.descendant.push(descendant);
        self.main_progenitor.push(NONE);
        self.next_sibling.push(NONE);
        self.branch.push(branch);
        self.smooth_msun.push(0.0);
        id
    }

    /// Iterate over the progenitors of node `d`, main progenitor first.
    pub fn progenitors(&self, d: u32) -> impl Iterator<Item = u32> + '_ {
        let mut p = self.main_progenitor[d as usize];
        std::iter::from_fn(move || {
            if p == NONE {
                None
            } else {
                let out = p;
                p = self.next_sibling[p as usize];
                Some(out)
            }
        })
    }

    /// The nodes of branch b from latest to earliest (walk of main progenitors).
    pub fn branch_nodes(&self, b: u32) -> impl Iterator<Item = u32> + '_ {
        let mut n = self.branch_first[b as usize];
        std::iter::from_fn(move || {
            if n == NONE {
                None
            } else {
                let out = n;
                let next = self.main_progenitor[n as usize];
                n = if next != NONE && self.branch[next as usize] == b {
                    next
                } else {
                    NONE
                };
                Some(out)
            }
        })
    }

    /// The node a branch merges into (NONE for the main branch).
    pub fn merges_into(&self, b: u32) -> u32 {
        self.descendant[self.branch_first[b as usize] as usize]
    }

    /// Structural checks: masses positive; each node's progenitor masses plus its smooth
    /// accretion equal its mass to 1e-10; times increase toward the root; the main
    /// progenitor is the most massive; progenitor links point back to their descendant.
    pub fn validate(&self) -> Result<(), InvalidValue> {
        let n = self.n_nodes();
        let bad = |what: String| Err(InvalidValue::new("tree", what, "violates a tree invariant"));
        for i in 0..n {
            let m = self.mass_msun[i];
            if !(m > 0.0 && m.is_finite()) {
                return bad(format!("node {i} has mass {m}"));
            }
            let d = self.descendant[i];
            if d != NONE {
                if self.w[d as usize] >= self.w[i] {
                    return bad(format!("node {i} is not earlier than its descendant {d}"));
                }
                if self.t_gyr[d as usize] <= self.t_gyr[i] {
                    return bad(format!(
                        "node {i}: cosmic time does not increase toward the root"
                    ));
                }
            } else if i != 0 {
                return bad(format!("node {i} has no descendant"));
            }
            let mut sum = 0.0;
            let mut first = true;
            let mut main_mass = 0.0;
            for p in self.progenitors(i as u32) {
                let pm = self.mass_msun[p as usize];
                if self.descendant[p as usize] != i as u32 {
                    return bad(format!("progenitor {p} of node {i} points elsewhere"));
                }
                if first {
                    main_mass = pm;
                    first = false;
                } else if pm > main_mass * (1.0 + 1e-12) {
                    return bad(format!("node {i}: main progenitor is not the most massive"));
                }
                sum += pm;
            }
            // progenitors + smooth accretion = node mass, to round-off
            let smooth = self.smooth_msun[i];
            if smooth < -1e-12 * m || ((sum + smooth) / m - 1.0).abs() > 1e-10 {
                return bad(format!(
                    "node {i}: progenitors {sum:e} + smooth accretion {smooth:e} != mass {m:e}"
                ));
            }
        }
        Ok(())
    }
}
