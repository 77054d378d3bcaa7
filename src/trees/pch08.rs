//! The merger-tree sampler of Parkinson, Cole & Helly 2008 (MNRAS 383, 557; sec. 2 and
//! appendix A), built on the binary-split scheme of Cole et al. 2000 (MNRAS 319, 168).
//!
//! A halo of mass M2 at clock value w2 = delta_c/D is followed back in steps dw. The EPS
//! progenitor rate per unit w and mass fraction q = M1/M2 (q_res < q <= 1/2),
//!   dN/dq = sqrt(2/pi) alpha(qM2) sigma1^2 q^-2 (sigma1^2 - sigma2^2)^-3/2 G dw,
//! is multiplied by G = G0 (sigma1/sigma2)^gamma1 (w2/sigma2)^gamma2 and bounded by a power
//! law in q, B q^beta, fitted through q_res and 1/2; q is drawn from the bound by inversion
//! and accepted with probability R(q) = [alpha1/alpha_h][V(q)/(B q^beta)][(sigma1/sigma_h)(2q)^mu]^gamma1.
//! Steps obey dw <= eps1 sqrt(2 (sigma_h^2 - sigma2^2)) and N_up(dw) <= eps2, and never pass an
//! output time. The fraction of M2 accreted below the resolution in a step is
//!   F = sqrt(2/pi) J(u_res) (G0/sigma2) (w2/sigma2)^gamma2 dw, u_res = sigma2/sqrt(sigma_res^2 - sigma2^2),
//! with J(u) = \int_0^u (1 + 1/x^2)^(gamma1/2) dx tabulated once. The bounding functions and
//! J are written from the paper's appendix A as recalled (recalled from memory; the checks in
//! tests/validation/val_trees.rs compare the sampler with analytic EPS and published fits).
//!
//! The traversal is iterative (an explicit stack of pending branches, depth first) and all
//! storage lives in a `TreeBuilder` that is reused from tree to tree.

use std::f64::consts::{LN_2 as LN2, PI};

use rand::Rng;

use super::tree::{MergerTree, NONE};
use super::{OutputTimes, Pch08Params, TreeSpec};
use crate::error::InvalidValue;
use crate::interp::UniformHermite;
use crate::linear::LinearTheory;

/// J(u) = \int_0^u (1 + 1/x^2)^(gamma1/2) dx as a table in ln u.
#[derive(Debug, Clone)]
struct JTable {
    gamma1: f64,
    table: UniformHermite,
    ln_u_min: f64,
    ln_u_max: f64,
}

impl JTable {
    fn new(gamma1: f64) -> Self {
        let (ln_u_min, ln_u_max) = ((1e-6f64).ln(), (1e6f64).ln());
        let n = 2001;
        let h = (ln_u_max - ln_u_min) / (n - 1) as f64;
        let integrand = |x: f64| (1.0 + 1.0 / (x * x)).powf(0.5 * gamma1);
        // J(u_min) from the small-x form x^-gamma1 (1 + x^2)^(gamma1/2): integrate the series
        // term by term: u^(1-g)/(1-g) + (g/2) u^(3-g)/(3-g)
        let u0 = ln_u_min.exp();
        let mut j = u0.powf(1.0 - gamma1) / (1.0 - gamma1)
            + 0.5 * gamma1 * u0.powf(3.0 - gamma1) / (3.0 - gamma1);
        let mut y = Vec::with_capacity(n);
        let mut dy = Vec::with_capacity(n);
        for i in 0..n {
            let lu = ln_u_min + h * i as f64;
            if i > 0 {
                // Simpson on [lu - h, lu] in ln u: dJ/dln u = u f(u)
                let g = |l: f64| l.exp() * integrand(l.exp());
                j += h / 6.0 * (g(lu - h) + 4.0 * g(lu - 0.5 * h) + g(lu));
            }
            let u = lu.exp();
            y.push(j);
            dy.push(u * integrand(u));
        }
        Self {
            gamma1,
            table: UniformHermite::new(ln_u_min, h, y, dy),
            ln_u_min,
            ln_u_max,
        }
    }

    #[inline]
    fn eval(&self, u: f64) -> f64 {
        let lu = u.ln();
        if lu <= self.ln_u_min {
            return u.powf(1.0 - self.gamma1) / (1.0 - self.gamma1);
        }
        if lu >= self.ln_u_max {
            // integrand -> 1: J grows linearly
            return self.table.eval(self.ln_u_max) + (u - self.ln_u_max.exp());
        }
        self.table.eval(lu)
    }
}

/// A branch waiting to be followed back in time.
#[derive(Debug, Clone, Copy)]
struct Pending {
    mass: f64,
    w: f64,
    /// The branch's latest node (already created).
    node: u32,
    branch: u32,
}

/// Reusable sampler state: the tree arena, the stack and the J(u) table. One per thread.
#[derive(Debug, Clone)]
pub struct TreeBuilder {
    params: Pch08Params,
    j: JTable,
    stack: Vec<Pending>,
    tree: MergerTree,
}

impl TreeBuilder {
    pub fn new(params: Pch08Params) -> Result<Self, InvalidValue> {
        if let Some(p) = params.problems("trees.").into_iter().next() {
            return Err(p);
        }
        Ok(Self {
            params,
            j: JTable::new(params.gamma1),
            stack: Vec::new(),
            tree: MergerTree::default(),
        })
    }

    pub fn params(&self) -> &Pch08Params {
        &self.params
    }

    /// Grow one tree. The returned reference is valid until the next call.
    pub fn build<R: Rng>(
        &mut self,
        lt: &LinearTheory,
        spec: &TreeSpec,
        rng: &mut R,
    ) -> Result<&MergerTree, InvalidValue> {
        if let Some(p) = spec.problems("trees.").into_iter().next() {
            return Err(p);
        }
        if spec.pch08 != self.params {
            *self = Self::new(spec.pch08)?;
        }
        let (lo, hi) = lt.sigma_table().mass_range_msun();
        if spec.m_resolution_msun < lo || spec.m_host_msun > hi {
            return Err(InvalidValue::new(
                "trees.resolution_msun",
                spec.m_resolution_msun,
                format!("masses must lie inside the sigma(M) table, [{lo:.2e}, {hi:.2e}] Msun"),
            ));
        }
        let clock = lt.clock();
        let w_of_z = |z: f64| lt.w_of_z(z);
        let w_final = w_of_z(spec.z_final);
        let w_max = w_of_z(spec.z_max);
        if w_max >= clock.w_max() {
            return Err(InvalidValue::new(
                "trees.z_max",
                spec.z_max,
                "beyond the clock table (z <= 999)",
            ));
        }
        let tree = &mut self.tree;
        tree.clear();
        tree.m_resolution_msun = spec.m_resolution_msun;
        // output times, increasing in w (toward the past), always including z_max
        let mut outs: Vec<f64> = match &spec.outputs {
            OutputTimes::Redshifts(zs) => zs.iter().map(|&z| w_of_z(z)).collect(),
            OutputTimes::UniformLnA(n) => {
                let (a0, a1) = ((1.0 + spec.z_final).ln(), (1.0 + spec.z_max).ln());
                (1..=*n)
                    .map(|i| w_of_z((a0 + (a1 - a0) * i as f64 / *n as f64).exp() - 1.0))
                    .collect()
            }
        };
        outs.push(w_max);
        outs.retain(|&w| w > w_final * (1.0 + 1e-12) && w <= w_max);
        outs.sort_by(|a, b| a.partial_cmp(b).unwrap());
        outs.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * *b);
        tree.output_w.push(w_final);
        tree.output_w.extend_from_slice(&outs);

        let table = lt.sigma_table();
        let p = self.params;
        let m_res = spec.m_resolution_msun;
        let ln_mres = m_res.ln();
        let ln_sres = table.ln_sigma(ln_mres);
        let sres2 = (2.0 * ln_sres).exp();
        let sqrt_2_pi = (2.0 / PI).sqrt();

        let root = tree.push_node(spec.m_host_msun, w_final, NONE, 0);
        tree.branch_first.push(root);
        tree.branch_merge_w.push(f64::NAN);
        tree.branch_order.push(0);
        tree.branch_oldest_w.push(w_final);
        tree.branch_oldest_msun.push(spec.m_host_msun);
        self.stack.clear();
        self.stack.push(Pending {
            mass: spec.m_host_msun,
            w: w_final,
            node: root,
            branch: 0,
        });

        while let Some(mut b) = self.stack.pop() {
            // index of the next output time strictly beyond b.w
            let mut k_out = tree.output_w.partition_point(|&w| w <= b.w * (1.0 + 1e-14));
            let mut last_node = b.node;
            // smooth accretion accumulated since last_node (going back in time)
            let mut smooth = 0.0;
            // the oldest state seen above the resolution
            let mut oldest = (b.w, b.mass);
            loop {
                if b.mass < m_res {
                    // below resolution: the rest of the branch is smooth accretion
                    smooth += b.mass;
                    break;
                }
                oldest = (b.w, b.mass);
                if k_out >= tree.output_w.len() || b.w >= w_max {
                    // reached z_max: the remaining mass is unresolved history
                    smooth += b.mass;
                    break;
                }
                let w_next = tree.output_w[k_out];
                let m2 = b.mass;
                let w2 = b.w;
                let ln_m2 = m2.ln();
                let (ln_s2, _) = table.ln_sigma_and_slope(ln_m2);
                let (ln_sh, slope_h) = table.ln_sigma_and_slope(ln_m2 - LN2);
                let sigma2 = ln_s2.exp();
                let sigma_h = ln_sh.exp();
                let s2 = sigma2 * sigma2;
                let sh2 = sigma_h * sigma_h;
                let alpha_h = -slope_h;
                let ln_qres = ln_mres - ln_m2;
                let q_res = ln_qres.exp();
                let ln_w2 = w2.ln();
                // (w2/sigma2)^gamma2
                let g_w = if p.gamma2 == 0.0 {
                    1.0
                } else {
                    (p.gamma2 * (ln_w2 - ln_s2)).exp()
                };

                // step-size condition 1
                let mut dw = p.eps1 * (2.0 * (sh2 - s2)).max(0.0).sqrt();
                let mut split_rate = 0.0; // N_up per unit w
                let mut bound = None;
                if q_res < 0.5 {
                    // V(q) = sigma1^2 / (sigma1^2 - sigma2^2)^(3/2)
                    let v = |s1sq: f64| {
                        let d = s1sq - s2;
                        s1sq / (d * d.sqrt())
                    };
                    let v_res = v(sres2);
                    let v_half = v(sh2);
                    let ln2q = LN2 + ln_qres;
                    let beta = (v_res / v_half).ln() / ln2q;
                    let big_b = v_half * (beta * LN2).exp();
                    let mu = if p.gamma1 >= 0.0 {
                        alpha_h
                    } else {
                        -(ln_sres - ln_sh) / ln2q
                    };
                    let eta = beta - 1.0 - p.gamma1 * mu;
                    let integral = if eta.abs() < 1e-8 {
                        -ln2q
                    } else {
                        ((-eta * LN2).exp() - (eta * ln_qres).exp()) / eta
                    };
                    // G0 2^(-mu gamma1) (sigma_h/sigma2)^gamma1
                    let g_fac = p.g0 * (p.gamma1 * (ln_sh - ln_s2 - mu * LN2)).exp();
                    split_rate = sqrt_2_pi * big_b * alpha_h * g_fac * g_w * integral;
                    if split_rate > 0.0 {
                        dw = dw.min(p.eps2 / split_rate);
                    }
                    bound = Some((beta, big_b, mu, eta, ln2q));
                }
                dw = dw.min(w_next - w2);
                // unresolved accretion in this step
                let u_res = sigma2 / (sres2 - s2).max(1e-300).sqrt();
                let f_smooth =
                    (sqrt_2_pi * self.j.eval(u_res) * (p.g0 / sigma2) * g_w * dw).min(1.0);

                let mut split_q = None;
                if let Some((beta, big_b, mu, eta, ln2q)) = bound {
                    let n_up = split_rate * dw;
                    if rng.random::<f64>() < n_up {
                        let r2: f64 = rng.random();
                        let ln_q = if eta.abs() < 1e-8 {
                            ln_qres - ln2q * r2
                        } else {
                            let a = (eta * ln_qres).exp();
                            (a + ((-eta * LN2).exp() - a) * r2).ln() / eta
                        };
                        let q = ln_q.exp();
                        let (ln_s1, slope1) = table.ln_sigma_and_slope(ln_m2 + ln_q);
                        let s1 = (2.0 * ln_s1).exp();
                        let d1 = s1 - s2;
                        let vq = s1 / (d1 * d1.sqrt());
                        // R = [alpha1/alpha_h] [V(q)/(B q^beta)] [(sigma1/sigma_h)(2q)^mu]^gamma1
                        let r = (-slope1 / alpha_h)
                            * (vq / (big_b * (beta * ln_q).exp()))
                            * (p.gamma1 * (ln_s1 - ln_sh + mu * (LN2 + ln_q))).exp();
                        if r > 1.0 {
                            tree.bound_violations += 1;
                        }
                        if rng.random::<f64>() < r {
                            split_q = Some(q);
                        }
                    }
                }

                let w_new = w2 + dw;
                match split_q {
                    Some(q) => {
                        let m_a = q * m2;
                        let m_b = m2 * (1.0 - f_smooth - q);
                        let (m_main, m_sec) = if m_b >= m_a { (m_b, m_a) } else { (m_a, m_b) };
                        // the descendant node at w2 (reuse the branch's node if it is there)
                        let desc = if tree.w[last_node as usize] == w2 {
                            last_node
                        } else {
                            let d = tree.push_node(m2, w2, last_node, b.branch);
                            link_progenitor(tree, last_node, d);
                            tree.smooth_msun[last_node as usize] += smooth;
                            smooth = 0.0;
                            last_node = d;
                            d
                        };
                        // from here on `smooth` belongs to `desc`
                        smooth += m2 * f_smooth;
                        if m_sec >= m_res {
                            let nb = tree.branch_first.len() as u32;
                            let s = tree.push_node(m_sec, w_new, desc, nb);
                            link_secondary(tree, desc, s);
                            tree.branch_first.push(s);
                            tree.branch_merge_w.push(0.5 * (w2 + w_new));
                            let order = tree.branch_order[b.branch as usize] + 1;
                            tree.branch_order.push(order);
                            tree.branch_oldest_w.push(w_new);
                            tree.branch_oldest_msun.push(m_sec);
                            self.stack.push(Pending {
                                mass: m_sec,
                                w: w_new,
                                node: s,
                                branch: nb,
                            });
                        } else {
                            smooth += m_sec;
                        }
                        b.mass = m_main;
                        b.w = w_new;
                        if b.mass >= m_res {
                            let n = tree.push_node(b.mass, w_new, desc, b.branch);
                            link_progenitor(tree, desc, n);
                            tree.smooth_msun[desc as usize] += smooth;
                            smooth = 0.0;
                            last_node = n;
                        }
                    }
                    None => {
                        smooth += m2 * f_smooth;
                        b.mass = m2 * (1.0 - f_smooth);
                        b.w = w_new;
                    }
                }
                if b.w >= w_next * (1.0 - 1e-14) {
                    b.w = w_next;
                    k_out += 1;
                    if b.mass >= m_res && tree.w[last_node as usize] != w_next {
                        let n = tree.push_node(b.mass, w_next, last_node, b.branch);
                        link_progenitor(tree, last_node, n);
                        tree.smooth_msun[last_node as usize] += smooth;
                        smooth = 0.0;
                        last_node = n;
                    }
                }
            }
            tree.smooth_msun[last_node as usize] += smooth;
            tree.branch_oldest_w[b.branch as usize] = oldest.0;
            tree.branch_oldest_msun[b.branch as usize] = oldest.1;
        }

        // times and redshifts
        let cosmo = lt.cosmology();
        let n = tree.n_nodes();
        tree.z.reserve(n);
        tree.t_gyr.reserve(n);
        for i in 0..n {
            let z = clock.z(tree.w[i]);
            tree.z.push(z);
            tree.t_gyr.push(cosmo.age_gyr(z));
        }
        for &w in &tree.branch_merge_w {
            if w.is_nan() {
                tree.branch_merge_z.push(f64::NAN);
                tree.branch_merge_t_gyr.push(f64::NAN);
            } else {
                let z = clock.z(w);
                tree.branch_merge_z.push(z);
                tree.branch_merge_t_gyr.push(cosmo.age_gyr(z));
            }
        }
        for &w in &tree.branch_oldest_w {
            tree.branch_oldest_z.push(clock.z(w));
        }
        for &w in &tree.output_w {
            let z = clock.z(w);
            tree.output_z.push(z);
            tree.output_t_gyr.push(cosmo.age_gyr(z));
        }
        Ok(&self.tree)
    }

    /// The last tree built.
    pub fn tree(&self) -> &MergerTree {
        &self.tree
    }
}

/// Make `p` the main progenitor of `d` (head of its progenitor list).
#[inline]
fn link_progenitor(tree: &mut MergerTree, d: u32, p: u32) {
    tree.next_sibling[p as usize] = tree.main_progenitor[d as usize];
    tree.main_progenitor[d as usize] = p;
}

/// Add `s` to the progenitor list of `d`, behind the head.
#[inline]
fn link_secondary(tree: &mut MergerTree, d: u32, s: u32) {
    let head = tree.main_progenitor[d as usize];
    if head == NONE {
        tree.main_progenitor[d as usize] = s;
    } else {
        tree.next_sibling[s as usize] = tree.next_sibling[head as usize];
        tree.next_sibling[head as usize] = s;
    }
}
