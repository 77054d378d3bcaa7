//! PNG figures with plotters. Text uses the DejaVu Sans font shipped in assets/fonts (free
//! licence, assets/fonts/LICENSE_DEJAVU), embedded in the binary so figures render on
//! machines without fonts.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use super::short_number;
use plotters::coord::ranged1d::ValueFormatter;
use plotters::prelude::*;

use crate::stats::compact::FigureData;
use crate::stats::intervals::Binned;
use crate::stats::tests::Curve;
use crate::stats::AnalysisResults;

static FONT: OnceLock<Result<(), String>> = OnceLock::new();

fn ensure_font() -> Result<(), String> {
    FONT.get_or_init(|| {
        plotters::style::register_font(
            "sans-serif",
            FontStyle::Normal,
            include_bytes!("../../assets/fonts/DejaVuSans.ttf"),
        )
        .map_err(|_| "the embedded font could not be loaded".to_string())
    })
    .clone()
}

const COLORS: [RGBColor; 3] = [
    RGBColor(31, 119, 180),
    RGBColor(214, 39, 40),
    RGBColor(44, 160, 44),
];

type Res = Result<(), Box<dyn std::error::Error>>;

/// A chart with the title and label areas every figure uses.
fn chart<'a, 'b, DB: DrawingBackend>(
    root: &'a DrawingArea<DB, plotters::coord::Shift>,
    title: &str,
    y_label_width: u32,
) -> ChartBuilder<'a, 'b, DB> {
    let mut b = ChartBuilder::on(root);
    b.caption(title, ("sans-serif", 24))
        .margin(20)
        .x_label_area_size(45)
        .y_label_area_size(y_label_width);
    b
}

/// Grid, tick labels and axis titles, in the style every figure uses.
fn draw_axes<'a, DB, X, Y>(
    ch: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    xlabel: &str,
    ylabel: &str,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64> + ValueFormatter<f64>,
    Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    ch.configure_mesh()
        .x_desc(xlabel)
        .y_desc(ylabel)
        .x_label_formatter(&|v| short_number(*v))
        .y_label_formatter(&|v| short_number(*v))
        .label_style(("sans-serif", 16))
        .draw()
}

/// The legend box shared by the multi-series figures.
fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
    ch: &mut ChartContext<'a, DB, CT>,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    ch.configure_series_labels()
        .background_style(WHITE.mix(0.8))
        .border_style(BLACK)
        .label_font(("sans-serif", 16))
        .draw()
}

fn curve_plot(
    path: &Path,
    title: &str,
    xlabel: &str,
    curves: &[(String, Vec<f64>, &Curve)],
) -> Res {
    let root = BitMapBackend::new(path, (900, 600)).into_drawing_area();
    root.fill(&WHITE)?;
    let xmax = curves
        .iter()
        .flat_map(|c| c.1.iter().copied())
        .fold(0.0f64, f64::max)
        .max(1e-3);
    let mut ch = chart(&root, title, 60).build_cartesian_2d(0.0..xmax, 0.0..1.0)?;
    draw_axes(&mut ch, xlabel, "probability")?;
    for (i, (name, x, c)) in curves.iter().enumerate() {
        let col = COLORS[i % COLORS.len()];
        let band: Vec<(f64, f64)> = x
            .iter()
            .zip(&c.spread)
            .map(|(&x, s)| (x, s.p84))
            .chain(x.iter().zip(&c.spread).rev().map(|(&x, s)| (x, s.p16)))
            .collect();
        ch.draw_series(std::iter::once(Polygon::new(band, col.mix(0.12))))?;
        let boot: Vec<(f64, f64)> = x
            .iter()
            .zip(&c.spread)
            .map(|(&x, s)| (x, s.boot84))
            .chain(x.iter().zip(&c.spread).rev().map(|(&x, s)| (x, s.boot16)))
            .collect();
        ch.draw_series(std::iter::once(Polygon::new(boot, col.mix(0.35))))?;
        ch.draw_series(LineSeries::new(
            x.iter().zip(&c.spread).map(|(&x, s)| (x, s.mean)),
            col.stroke_width(2),
        ))?
        .label(name.clone())
        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2)));
    }
    draw_legend(&mut ch)?;
    root.present()?;
    Ok(())
}

fn hist_plot(
    path: &Path,
    title: &str,
    xlabel: &str,
    series: &[(String, Binned)],
    group: usize,
) -> Res {
    let root = BitMapBackend::new(path, (900, 600)).into_drawing_area();
    root.fill(&WHITE)?;
    // merge `group` fine bins into one plotted bin; plot up to the last non-empty one
    let group = group.max(1);
    let hists: Vec<Vec<f64>> = series
        .iter()
        .map(|(_, b)| {
            let n = b.counts.iter().sum::<f64>().max(1.0);
            let w = b.width() * group as f64;
            b.counts
                .chunks(group)
                .map(|c| c.iter().sum::<f64>() / (n * w))
                .collect()
        })
        .collect();
    let w = series
        .first()
        .map(|(_, b)| b.width() * group as f64)
        .unwrap_or(1.0);
    let last = hists
        .iter()
        .filter_map(|h| h.iter().rposition(|&v| v > 0.0))
        .max()
        .unwrap_or(0);
    let xmax = ((last + 1) as f64 * w).max(1e-3);
    let ymax = hists
        .iter()
        .flatten()
        .copied()
        .fold(0.0f64, f64::max)
        .max(1e-9)
        * 1.1;
    let mut ch = chart(&root, title, 70).build_cartesian_2d(0.0..xmax, 0.0..ymax)?;
    draw_axes(&mut ch, xlabel, "probability density")?;
    for (i, ((name, _), h)) in series.iter().zip(&hists).enumerate() {
        let col = COLORS[i % COLORS.len()];
        let pts: Vec<(f64, f64)> = h
            .iter()
            .enumerate()
            .flat_map(|(k, &v)| [(k as f64 * w, v), ((k + 1) as f64 * w, v)])
            .collect();
        ch.draw_series(LineSeries::new(pts, col.stroke_width(2)))?
            .label(name.clone())
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2)));
    }
    draw_legend(&mut ch)?;
    root.present()?;
    Ok(())
}

fn cumulative_plot(
    path: &Path,
    title: &str,
    xlabel: &str,
    ylabel: &str,
    x: &[f64],
    y: &[f64],
    log: bool,
) -> Res {
    let root = BitMapBackend::new(path, (900, 600)).into_drawing_area();
    root.fill(&WHITE)?;
    let pts: Vec<(f64, f64)> = x
        .iter()
        .zip(y)
        .filter(|(a, b)| a.is_finite() && b.is_finite() && (!log || (**a > 0.0 && **b > 0.0)))
        .map(|(a, b)| (*a, *b))
        .collect();
    if pts.is_empty() {
        return Ok(());
    }
    let (x0, x1) = pts.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |a, p| {
        (a.0.min(p.0), a.1.max(p.0))
    });
    let (y0, y1) = pts.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |a, p| {
        (a.0.min(p.1), a.1.max(p.1))
    });
    if log {
        let mut ch = chart(&root, title, 70)
            .build_cartesian_2d((x0..x1).log_scale(), (y0..y1 * 1.1).log_scale())?;
        draw_axes(&mut ch, xlabel, ylabel)?;
        ch.draw_series(LineSeries::new(pts, COLORS[0].stroke_width(2)))?;
    } else {
        let mut ch =
            chart(&root, title, 70).build_cartesian_2d(x0.min(0.0)..x1, y0.min(0.0)..y1 * 1.05)?;
        draw_axes(&mut ch, xlabel, ylabel)?;
        ch.draw_series(LineSeries::new(pts, COLORS[0].stroke_width(2)))?;
    }
    root.present()?;
    Ok(())
}

/// The median first-infall redshift of the selected satellites in each grid cell against the
/// cell's median host mass: one line per cosmology, a marker per cell. (The all-of-N
/// probability at a fixed redshift, the other column of `dependence.csv`, is often 0 in every
/// cell and would show nothing.)
fn cell_plot(path: &Path, cells: &[(u16, u16, usize, f64, f64, f64)]) -> Res {
    let pts: Vec<(u16, f64, f64)> = cells
        .iter()
        .filter(|d| d.3 > 0.0 && d.4.is_finite())
        .map(|d| (d.0, d.3, d.4))
        .collect();
    if pts.is_empty() {
        return Ok(());
    }
    let root = BitMapBackend::new(path, (900, 600)).into_drawing_area();
    root.fill(&WHITE)?;
    let (m0, m1) = pts
        .iter()
        .fold((f64::INFINITY, 0.0f64), |a, p| (a.0.min(p.1), a.1.max(p.1)));
    let z1 = pts.iter().fold(0.0f64, |a, p| a.max(p.2));
    let title = if pts.len() == 1 {
        "median first-infall z of the selected satellites (one grid cell)"
    } else {
        "median first-infall z of the selected satellites by grid cell"
    };
    let mut ch = chart(&root, title, 70)
        .build_cartesian_2d((m0 / 1.5..m1 * 1.5).log_scale(), 0.0..(z1 * 1.15).max(1.0))?;
    draw_axes(
        &mut ch,
        "median host mass (Msun)",
        "median first-infall redshift",
    )?;
    let mut cosmos: Vec<u16> = pts.iter().map(|p| p.0).collect();
    cosmos.sort_unstable();
    cosmos.dedup();
    for (k, c) in cosmos.iter().enumerate() {
        let col = COLORS[k % COLORS.len()];
        let mut line: Vec<(f64, f64)> = pts
            .iter()
            .filter(|p| p.0 == *c)
            .map(|p| (p.1, p.2))
            .collect();
        line.sort_by(|a, b| a.0.total_cmp(&b.0));
        ch.draw_series(line.iter().map(|&p| Circle::new(p, 5, col.filled())))?
            .label(format!("cosmology {c}"))
            .legend(move |(x, y)| Circle::new((x + 10, y), 5, col.filled()));
        ch.draw_series(LineSeries::new(line, col.stroke_width(2)))?;
    }
    if cosmos.len() > 1 {
        draw_legend(&mut ch)?;
    }
    root.present()?;
    Ok(())
}

/// Write every figure into `dir`; returns the files written. `theories`: the run's
/// cosmologies; the lookback axis of the curves over redshift uses the first (and says so
/// when there are several: a pooled curve over z has no single lookback axis).
pub fn write_figures(
    dir: &Path,
    res: &AnalysisResults,
    fig: &FigureData,
    theories: &[crate::linear::LinearTheory],
) -> Result<Vec<PathBuf>, String> {
    let cosmo = theories
        .first()
        .ok_or("no cosmology to draw a lookback axis with")?
        .cosmology();
    let lookback_label = if theories.len() > 1 {
        "lookback time in the first cosmology (Gyr)"
    } else {
        "lookback time (Gyr)"
    };
    ensure_font()?;
    let mut out = Vec::new();
    let mut go = |name: &str, r: Res| -> Result<(), String> {
        r.map_err(|e| format!("figure {name}: {e}"))?;
        out.push(dir.join(name));
        Ok(())
    };
    let by_z: Vec<(String, Vec<f64>, &Curve)> = res
        .all_of_n_mc
        .iter()
        .map(|(c, cv)| (c.name().to_string(), cv.x.clone(), cv))
        .collect();
    go(
        "all_of_n_vs_redshift.png",
        curve_plot(
            &dir.join("all_of_n_vs_redshift.png"),
            &format!("P(all {} fell in before z)", res.n_draw),
            "redshift z",
            &by_z,
        ),
    )?;
    let lb = |z: f64| cosmo.lookback_gyr(z);
    let by_t: Vec<(String, Vec<f64>, &Curve)> = res
        .all_of_n_mc
        .iter()
        .map(|(c, cv)| {
            (
                c.name().to_string(),
                cv.x.iter().map(|&z| lb(z)).collect(),
                cv,
            )
        })
        .collect();
    go(
        "all_of_n_vs_lookback.png",
        curve_plot(
            &dir.join("all_of_n_vs_lookback.png"),
            &format!("P(all {} fell in earlier than a lookback time)", res.n_draw),
            lookback_label,
            &by_t,
        ),
    )?;
    let infall: Vec<(String, Binned)> = res
        .infall_lookbacks
        .iter()
        .map(|(c, v)| (c.name().to_string(), v.clone()))
        .collect();
    go(
        "infall_times.png",
        hist_plot(
            &dir.join("infall_times.png"),
            "infall lookback times of selected satellites",
            "lookback time (Gyr)",
            &infall,
            10,
        ),
    )?;
    // pericentres of the selected satellites (fixed bins)
    let peri = &fig.peri_kpc;
    let w = peri.width();
    // normalised over every selected satellite, so the density integrates to the fraction
    // with a pericentre inside the range; the title gives the rest
    let all = peri.total() + peri.missing;
    let tot: f64 = all.max(1.0);
    let peri_title = format!(
        "smallest pericentre of the selected satellites ({:.0}% with none yet, {:.0}% beyond {} kpc)",
        100.0 * peri.missing / tot,
        100.0 * peri.above / tot,
        peri.hi
    );
    let px: Vec<f64> = (0..peri.counts.len())
        .flat_map(|k| [peri.lo + k as f64 * w, peri.lo + (k + 1) as f64 * w])
        .collect();
    let py: Vec<f64> = peri
        .counts
        .iter()
        .flat_map(|&c| [c / (tot * w), c / (tot * w)])
        .collect();
    go(
        "pericentres.png",
        cumulative_plot(
            &dir.join("pericentres.png"),
            &peri_title,
            "r_peri (kpc)",
            "probability density (1/kpc)",
            &px,
            &py,
            false,
        ),
    )?;
    // mass function: mean N(> m_bound / M_host) per host inside R_vir
    let nh = fig.n_hosts.max(1) as f64;
    let mut psi = Vec::new();
    let mut ncum = Vec::new();
    let mut acc = 0.0;
    let lm = &fig.log_mass_ratio;
    for k in (0..lm.counts.len()).rev() {
        acc += lm.counts[k];
        psi.push(10f64.powf(lm.lo + lm.width() * k as f64));
        ncum.push(acc / nh);
    }
    go(
        "subhalo_mass_function.png",
        cumulative_plot(
            &dir.join("subhalo_mass_function.png"),
            "surviving subhaloes inside R_vir",
            "m_bound / M_host",
            "N(> m) per host",
            &psi,
            &ncum,
            true,
        ),
    )?;
    let rad = &fig.r_over_rvir;
    // every selected satellite counts in N (one exactly on the outer edge is `above`)
    let totr: f64 = (rad.counts.iter().sum::<f64>() + rad.above).max(1.0);
    let mut x = vec![rad.lo];
    let mut f = vec![0.0];
    let mut acc = 0.0;
    for (k, c) in rad.counts.iter().enumerate() {
        acc += c;
        x.push(rad.lo + (k + 1) as f64 * rad.width());
        f.push(acc / totr);
    }
    go(
        "radial_distribution.png",
        cumulative_plot(
            &dir.join("radial_distribution.png"),
            "radial distribution of the selected satellites",
            "r / R_vir",
            "N(< r) / N",
            &x,
            &f,
            false,
        ),
    )?;
    go(
        "dependence_on_host_mass.png",
        cell_plot(&dir.join("dependence_on_host_mass.png"), &res.dependence),
    )?;
    Ok(out)
}

#[cfg(test)]
mod tests {
    use crate::report::short_number as tick;

    #[test]
    fn tick_labels_are_short() {
        for (v, want) in [
            (9.999_999_999_999e-5, "1e-4"),
            (1e-7, "1e-7"),
            (2.5e-7, "2.5e-7"),
            (0.001, "0.001"),
            (0.015, "0.015"),
            (0.1, "0.1"),
            (1.0, "1"),
            (12.5, "12.5"),
            (300.0, "300"),
            (1000.0, "1000"),
            (2.0e4, "2e4"),
            (0.0, "0"),
            (-0.0, "0"),
            (-0.25, "-0.25"),
        ] {
            assert_eq!(tick(v), want, "{v}");
        }
    }
}
