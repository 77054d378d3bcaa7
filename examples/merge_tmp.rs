use retinue::halo::concentration::{c_of_m, ConcentrationModel};
use retinue::halo::MassDefinition;
use retinue::orbits::{evolve_in_isolated_halo, OrbitOptions};
use retinue::{Cosmology};
fn main() {
    let co = Cosmology::from_preset("planck18").unwrap();
    let z = std::env::args().nth(1).and_then(|s| s.parse().ok()).unwrap_or(0.0f64);
    let mp = 1e11;
    let rp = MassDefinition::Vir.radius_kpc(&co, mp, z);
    let cp = c_of_m(ConcentrationModel::DuttonMaccio14, &co, mp, z, MassDefinition::Vir);
    let g = 4.300917e-6;
    let vv = (g * mp / rp).sqrt();
    let tau = rp / (vv * 1.0227122);
    println!("parent R={rp:.1} kpc c={cp:.2} V={vv:.1} km/s R/V={tau:.3} Gyr");
    let opts = OrbitOptions::default();
    for ratio in [3.0, 5.0, 10.0, 20.0, 50.0] {
        for eps in [0.3f64, 0.5, 0.7] {
            let mc = mp / ratio;
            let rc = MassDefinition::Vir.radius_kpc(&co, mc, z);
            let cc = c_of_m(ConcentrationModel::DuttonMaccio14, &co, mc, z, MassDefinition::Vir);
            // circular speed at R of the untruncated NFW = V_vir; energy of circular orbit at R
            let vt = eps * vv;
            let vr = (vv * vv - vt * vt).sqrt();
            let res = evolve_in_isolated_halo(&opts, (mp, rp, cp), (mc, rc, cc), [rp, 0.0, 0.0], [-vr, vt, 0.0], 0.0, 60.0 * tau);
            let x = ratio;
            let jiang = (0.94 * eps.powf(0.6) + 0.6) / 0.86 * x / (1.0 + x).ln();
            let bk = 0.216 * x.powf(1.3) / (1.0 + x).ln() * (1.9 * eps).exp();
            println!("M/m={ratio:>4} eps={eps}: status {:?} t_merge/tau = {:.2} (disrupt {:.2}); Jiang08 {:.2}, BK08 {:.2}; fb={:.3}", res.status, res.t_merge_gyr / tau, res.t_disrupt_physical_gyr/tau, jiang, bk, res.m_bound_msun/mc);
        }
    }
}
