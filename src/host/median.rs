//! A host that follows the median mass history of Correa et al. 2015 instead of a sampled
//! tree (for `retinue orbit`, where one smooth, typical host is wanted).

use super::{EvolvingHost, HostOptions};
use crate::halo::concentration::{concentration, ConcentrationModel};
use crate::halo::definitions::convert_nfw;
use crate::halo::MassDefinition;
use crate::linear::LinearTheory;
use crate::trees::correa15;

/// Evolving host whose virial mass follows the Correa et al. 2015 median history ending at
/// `m_msun` (definition `mdef`) at z_final; masses converted between definitions with an NFW
/// profile and the Dutton & Maccio 2014 concentration (with the cosmology's WDM factor).
pub fn median_host(
    lt: &LinearTheory,
    m_msun: f64,
    mdef: MassDefinition,
    z_final: f64,
    options: &HostOptions,
    t_start: f64,
) -> EvolvingHost {
    let c = lt.cosmology();
    let conv = |m: f64, z: f64, from: MassDefinition, to: MassDefinition| {
        if from == to {
            return m;
        }
        let cc = concentration(lt, ConcentrationModel::DuttonMaccio14, m, z, from);
        convert_nfw(c, m, cc, z, from, to).0
    };
    let m200 = conv(m_msun, z_final, mdef, MassDefinition::C200);
    let (alpha, beta) = correa15::alpha_beta(lt, m200);
    let t_final = c.age_gyr(z_final);
    let mut pts = Vec::with_capacity(200);
    for i in 0..200 {
        // from z_final to z = 12, uniform in ln(1+z)
        let lz = (1.0 + z_final).ln() + (13.0f64.ln() - (1.0 + z_final).ln()) * i as f64 / 199.0;
        let z = lz.exp() - 1.0;
        let ratio =
            correa15::mass_ratio(alpha, beta, z) / correa15::mass_ratio(alpha, beta, z_final);
        let mvir = conv(m200 * ratio, z, MassDefinition::C200, MassDefinition::Vir);
        pts.push((c.age_gyr(z), mvir.ln()));
    }
    pts.sort_by(|a, b| a.0.partial_cmp(&b.0).unwrap());
    // the last point is exactly the requested mass at t_final
    if let Some(last) = pts.last_mut() {
        last.0 = t_final;
        last.1 = conv(m_msun, z_final, mdef, MassDefinition::Vir).ln();
    }
    EvolvingHost::from_mah(lt, &pts, options, t_start)
}
