use rayon::prelude::*;
use retinue::rng::HostId;
use retinue::synth::{synthesize_host, SynthOptions};
use retinue::trees::{TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};
use std::io::Write;
fn main() {
    let n: u32 = std::env::args().nth(1).and_then(|s| s.parse().ok()).unwrap_or(4);
    let out = std::env::args().nth(2).unwrap_or("/tmp/dump.csv".into());
    let lt = LinearTheory::new(Cosmology::from_preset("planck18").unwrap(), LinearOptions::default()).unwrap();
    let opts = SynthOptions { tree: TreeSpec::milky_way_default(), host: Default::default(), orbits: Default::default(), galaxies: Default::default(), survey: Default::default() };
    let recs: Vec<_> = (0..n).into_par_iter().map_init(|| TreeBuilder::new(opts.tree.pch08).unwrap(), |b, i| synthesize_host(&lt, &opts, 5, HostId::new(0, 0, i), b).unwrap()).collect();
    let mut f = std::io::BufWriter::new(std::fs::File::create(out).unwrap());
    writeln!(f, "host,rvir,branch,order,group,parent,status,bound_to,m_infall,m_peak,t_peak,t_infall,m_host_at_infall,t_first,t_last,t_release,t_merge,t_disrupt,t_peri_cut,r,m_bound,n_peri,r_peri_min,r_peri_last,n_cross,occupied,mstar,mv,x,y,z").unwrap();
    for (h, rec) in recs.iter().enumerate() {
        for (s, g) in rec.subhaloes.iter().zip(&rec.galaxies) {
            writeln!(f, "{h},{},{},{},{},{},{},{},{:e},{:e},{},{},{:e},{},{},{},{},{},{},{},{:e},{},{},{},{},{},{:e},{},{},{},{}", rec.summary.r_vir_kpc, s.branch, s.order, s.group, s.parent_branch, s.status as u8, s.bound_to_branch, s.m_infall_msun, s.m_peak_msun, s.t_peak_gyr, s.t_infall_gyr, s.m_host_at_infall_msun, s.t_first_host_infall_gyr, s.t_last_host_infall_gyr, s.t_release_gyr, s.t_merge_gyr, s.t_disrupt_physical_gyr, s.t_disrupt_pericentre_gyr, s.r_kpc, s.m_bound_msun, s.n_pericentres, s.r_peri_min_kpc, s.r_peri_last_kpc, s.n_host_crossings, g.occupied as u8, g.mstar_msun, g.m_v, s.pos_kpc[0], s.pos_kpc[1], s.pos_kpc[2]).unwrap();
        }
    }
}
