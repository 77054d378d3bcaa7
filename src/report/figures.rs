//! Figures with plotters, each drawn twice from the same code: PNG (the bitmap backend) and
//! SVG (the SVG backend, whose text is `<text>` elements in the viewer's sans-serif font, so
//! it needs no font file). The PNG text uses the DejaVu Sans font shipped in assets/fonts
//! (free licence, assets/fonts/LICENSE_DEJAVU), embedded in the binary so figures render on
//! machines without fonts; that font also measures the text of both (titles shrink until
//! they fit the figure's width).
//!
//! Probability curves are on a log axis down to a floor (`probability_floor`): values below
//! it, zeros included, are drawn at it, and the axis label says so.

use std::error::Error;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use super::{short_number, FEW_HOSTS_FOR_INTERVAL};
use plotters::coord::ranged1d::ValueFormatter;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use crate::linear::LinearTheory;
use crate::orbits::OrbitOptions;
use crate::stats::battery::{ShellResult, TestOptions};
use crate::stats::compact::FigureData;
use crate::stats::intervals::{Binned, Spread};
use crate::stats::{AnalysisResults, Clock, ObservedSample, Survival};

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

/// Ten distinct colours (matplotlib's "tab10"), for grid cells.
const CELL_COLORS: [RGBColor; 10] = [
    RGBColor(31, 119, 180),
    RGBColor(214, 39, 40),
    RGBColor(44, 160, 44),
    RGBColor(255, 127, 14),
    RGBColor(148, 103, 189),
    RGBColor(140, 86, 75),
    RGBColor(227, 119, 194),
    RGBColor(127, 127, 127),
    RGBColor(188, 189, 34),
    RGBColor(23, 190, 207),
];

/// Line colours: the first six of `CELL_COLORS`.
const COLORS: [RGBColor; 6] = [
    CELL_COLORS[0],
    CELL_COLORS[1],
    CELL_COLORS[2],
    CELL_COLORS[3],
    CELL_COLORS[4],
    CELL_COLORS[5],
];

/// Colour i of n distinct ones: tab10 up to ten, else n hues evenly spaced around the colour
/// wheel (saturation 0.65, lightness 0.45), so no two cells share a colour.
pub fn cell_color(i: usize, n: usize) -> RGBColor {
    if n <= CELL_COLORS.len() {
        return CELL_COLORS[i % CELL_COLORS.len()];
    }
    let h = i as f64 / n as f64 * 360.0;
    let (s, l) = (0.65, 0.45);
    let c = (1.0 - (2.0 * l - 1.0f64).abs()) * s;
    let x = c * (1.0 - ((h / 60.0) % 2.0 - 1.0).abs());
    let m = l - c / 2.0;
    let (r, g, b) = match (h / 60.0) as u32 {
        0 => (c, x, 0.0),
        1 => (x, c, 0.0),
        2 => (0.0, c, x),
        3 => (0.0, x, c),
        4 => (x, 0.0, c),
        _ => (c, 0.0, x),
    };
    let to = |v: f64| ((v + m) * 255.0).round().clamp(0.0, 255.0) as u8;
    RGBColor(to(r), to(g), to(b))
}
const GREY: RGBColor = RGBColor(90, 90, 90);
/// The observed sample's marks on the probability curves.
const MARKS: RGBColor = RGBColor(148, 103, 189);

/// Shading of the host-to-host and the bootstrap 16–84% bands.
const HOSTS_ALPHA: f64 = 0.12;
const BOOT_ALPHA: f64 = 0.35;

/// The size of a single-panel figure, pixels.
const SIZE: (u32, u32) = (900, 600);
const MARGIN: u32 = 20;
const TITLE_MAX: u32 = 24;
const TITLE_MIN: u32 = 12;
const LABEL_SIZE: u32 = 16;

type Res = Result<(), Box<dyn Error>>;

/// What the figures need besides the results: the run's cosmologies (the lookback axis uses
/// the first), the observed sample (drawn where it belongs), the tests' settings (floor of
/// the probability axes, confidence, fraction) and the run's models (tree resolution,
/// disruption).
pub struct FigureInputs<'a> {
    pub theories: &'a [LinearTheory],
    /// Per-cell results (empty for a one-cell grid) and the cells' names.
    pub cells: &'a [crate::stats::cells::CellResults],
    pub labels: Option<&'a crate::report::CellLabels>,
    pub sample: Option<&'a ObservedSample>,
    pub tests: &'a TestOptions,
    pub orbits: &'a OrbitOptions,
    /// The trees' mass resolution, Msun (`trees.resolution_msun`).
    pub resolution_msun: f64,
}

/// The floor of the log probability axes: 1e-4, or the decade at or below 1/draws when there
/// are more than 10^4 draws per host (a single host's Monte Carlo probability is a multiple of
/// 1/draws; the mean over hosts can go below it, and the exact curves lower still, so the
/// floor is a choice of what is worth showing, stated in the axis label).
pub fn probability_floor(draws: usize) -> f64 {
    let per_draw = 1.0 / draws.max(1) as f64;
    let decade = 10f64.powf(per_draw.log10().floor());
    // 10^floor(log10 x) can land a rounding step above x (e.g. x = 1e-5)
    let decade = if decade > per_draw * (1.0 + 1e-12) {
        decade / 10.0
    } else {
        decade
    };
    decade.min(1e-4)
}

/// A probability for the log axis: below the floor (zero included) it is drawn at the floor.
fn at_floor(p: f64, floor: f64) -> f64 {
    p.clamp(floor, 1.0)
}

fn probability_label(floor: f64) -> String {
    let f = short_number(floor);
    format!("probability (values below {f} drawn at {f})")
}

/// Width in pixels of `text` at `size` in the embedded font (what both backends lay text out
/// by); a generous estimate if the font cannot measure it.
fn text_width(text: &str, size: u32) -> u32 {
    ("sans-serif", size)
        .into_font()
        .box_size(text)
        .map(|b| b.0)
        .unwrap_or(text.chars().count() as u32 * size)
}

/// The largest title font size (24 down to 12) at which `title` fits in a figure `width`
/// pixels wide, inside the margins.
fn title_size(title: &str, width: u32) -> u32 {
    let room = width.saturating_sub(2 * MARGIN);
    (TITLE_MIN..=TITLE_MAX)
        .rev()
        .find(|&s| text_width(title, s) <= room)
        .unwrap_or(TITLE_MIN)
}

/// A chart with the title (sized to fit) and label areas every figure uses.
fn chart<'a, 'b, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    title: &str,
    y_label_width: u32,
) -> ChartBuilder<'a, 'b, DB> {
    let width = area.dim_in_pixel().0;
    let mut b = ChartBuilder::on(area);
    b.caption(title, ("sans-serif", title_size(title, width)))
        .margin(MARGIN)
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
        .label_style(("sans-serif", LABEL_SIZE))
        .draw()
}

/// The legend box shared by the multi-series figures.
fn draw_legend<'a, DB: DrawingBackend + 'a, CT: CoordTranslate>(
    ch: &mut ChartContext<'a, DB, CT>,
    pos: SeriesLabelPosition,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>> {
    ch.configure_series_labels()
        .position(pos)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", LABEL_SIZE))
        .draw()
}

/// A legend entry with a filled swatch and no data (for bands drawn in several colours).
fn legend_swatch<'a, DB, X, Y>(
    ch: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    label: &str,
    color: RGBAColor,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    ch.draw_series(std::iter::empty::<PathElement<(f64, f64)>>())?
        .label(label)
        .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], color.filled()));
    Ok(())
}

/// A legend entry drawn as a short line (solid or dashed) with no data.
fn legend_line<'a, DB, X, Y>(
    ch: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    label: &str,
    style: ShapeStyle,
    dashed: bool,
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let anno = ch.draw_series(std::iter::empty::<PathElement<(f64, f64)>>())?;
    anno.label(label);
    if dashed {
        anno.legend(move |(x, y)| {
            EmptyElement::at((x, y))
                + PathElement::new(vec![(0, 0), (6, 0)], style)
                + PathElement::new(vec![(10, 0), (16, 0)], style)
        });
    } else {
        anno.legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], style));
    }
    Ok(())
}

/// Lines of text in a white box in the upper right corner of a chart's plotting area.
fn draw_notes<'a, DB, X, Y>(
    ch: &ChartContext<'a, DB, Cartesian2d<X, Y>>,
    lines: &[String],
) -> Result<(), DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let lines: Vec<&String> = lines.iter().filter(|l| !l.is_empty()).collect();
    if lines.is_empty() {
        return Ok(());
    }
    let area = ch.plotting_area().strip_coord_spec();
    let (aw, _) = area.dim_in_pixel();
    let line_h = 22;
    let w = lines
        .iter()
        .map(|l| text_width(l, LABEL_SIZE))
        .max()
        .unwrap_or(0) as i32
        + 16;
    let h = lines.len() as i32 * line_h + 8;
    let (x0, y0) = (aw as i32 - w - 8, 8);
    area.draw(&Rectangle::new(
        [(x0, y0), (x0 + w, y0 + h)],
        WHITE.mix(0.85).filled(),
    ))?;
    area.draw(&Rectangle::new([(x0, y0), (x0 + w, y0 + h)], BLACK))?;
    for (i, l) in lines.iter().enumerate() {
        area.draw(&Text::new(
            l.to_string(),
            (x0 + 8, y0 + 6 + line_h * i as i32),
            ("sans-serif", LABEL_SIZE).into_font(),
        ))?;
    }
    Ok(())
}

/// A figure drawn the same way on any backend.
trait Figure {
    fn size(&self) -> (u32, u32) {
        SIZE
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static;
}

/// Every figure a report may hold (each as NAME.png and NAME.svg); `save` refuses any other
/// name, so that `super::remove_stale` knows them all.
pub const FIGURE_NAMES: [&str; 13] = [
    "all_of_n_vs_redshift",
    "all_of_n_vs_lookback",
    "fraction_of_n",
    "quenching_delay",
    "phase_space_matches",
    "infall_times",
    "pericentres",
    "subhalo_mass_function",
    "radial_distribution",
    "backsplash_shells",
    "pair_separation",
    "dependence_on_host_mass",
    "all_of_n_by_cell",
];

/// Draw `fig` into DIR/NAME.png and DIR/NAME.svg and add both to `out`. Each file is drawn
/// into a hidden `.NAME.partial.EXT` beside it and renamed into place when complete, so an
/// interrupted report never leaves a truncated figure under the final name.
fn save(dir: &Path, name: &str, fig: &impl Figure, out: &mut Vec<PathBuf>) -> Result<(), String> {
    if !FIGURE_NAMES.contains(&name) {
        return Err(format!(
            "figure {name}: not in FIGURE_NAMES (a report's figures)"
        ));
    }
    let size = fig.size();
    let err = |p: &Path, e: Box<dyn Error>| format!("figure {}: {e}", p.display());
    let finish = |tmp: &Path, path: &Path| {
        std::fs::rename(tmp, path).map_err(|e| {
            let _ = std::fs::remove_file(tmp);
            err(path, e.into())
        })
    };
    let png = dir.join(format!("{name}.png"));
    let png_tmp = dir.join(format!(".{name}.partial.png"));
    {
        let root = BitMapBackend::new(&png_tmp, size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| err(&png, e.into()))?;
        fig.draw(&root).map_err(|e| err(&png, e))?;
        root.present().map_err(|e| err(&png, e.into()))?;
    }
    finish(&png_tmp, &png)?;
    let svg = dir.join(format!("{name}.svg"));
    let svg_tmp = dir.join(format!(".{name}.partial.svg"));
    {
        let root = SVGBackend::new(&svg_tmp, size).into_drawing_area();
        root.fill(&WHITE).map_err(|e| err(&svg, e.into()))?;
        fig.draw(&root).map_err(|e| err(&svg, e))?;
        root.present().map_err(|e| err(&svg, e.into()))?;
    }
    finish(&svg_tmp, &svg)?;
    out.push(png);
    out.push(svg);
    Ok(())
}

/// One probability curve with its bands.
struct ProbSeries<'a> {
    name: String,
    color: RGBColor,
    x: Vec<f64>,
    spread: &'a [Spread],
    /// Also shade the host-to-host 16–84% range (the bootstrap band is always drawn).
    hosts_band: bool,
}

/// A panel of probability curves on a log axis.
struct ProbPanel<'a> {
    title: String,
    xlabel: String,
    floor: f64,
    series: Vec<ProbSeries<'a>>,
    /// Thin grey vertical lines (e.g. the sample's quenching times) and their legend entry.
    marks: Vec<f64>,
    marks_label: String,
    /// A dashed horizontal line and its legend entry.
    hline: Option<(f64, String)>,
    /// Dashed vertical lines in a series' colour (no legend entry).
    vlines: Vec<(f64, RGBColor)>,
    legend: bool,
}

/// A panel with a legend and no extras.
fn prob_panel<'a>(
    title: String,
    xlabel: &str,
    floor: f64,
    series: Vec<ProbSeries<'a>>,
) -> ProbPanel<'a> {
    ProbPanel {
        title,
        xlabel: xlabel.into(),
        floor,
        series,
        marks: Vec::new(),
        marks_label: String::new(),
        hline: None,
        vlines: Vec::new(),
        legend: true,
    }
}

impl ProbPanel<'_> {
    fn draw_on<DB: DrawingBackend>(&self, area: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let floor = self.floor;
        let xmax = self
            .series
            .iter()
            .flat_map(|s| s.x.iter().copied())
            .chain(self.marks.iter().copied())
            .filter(|x| x.is_finite())
            .fold(0.0f64, f64::max)
            .max(1e-3);
        // a hair beyond [floor, 1], so both ends get their tick (the log axis puts ticks at
        // powers of ten computed in floating point)
        let mut ch = chart(area, &self.title, 60)
            .build_cartesian_2d(0.0..xmax, (floor * 0.999..1.001).log_scale())?;
        draw_axes(&mut ch, &self.xlabel, &probability_label(floor))?;
        for &m in &self.marks {
            ch.draw_series(std::iter::once(PathElement::new(
                vec![(m, floor), (m, 1.0)],
                MARKS.mix(0.6).stroke_width(1),
            )))?;
        }
        if !self.marks.is_empty() {
            legend_line(
                &mut ch,
                &self.marks_label,
                MARKS.mix(0.8).stroke_width(2),
                false,
            )?;
        }
        let mut any_hosts_band = false;
        let mut any_drawn = false;
        for s in &self.series {
            let col = s.color;
            // in order of x, where the curve has a value
            let mut k: Vec<usize> = (0..s.x.len().min(s.spread.len()))
                .filter(|&k| s.x[k].is_finite() && s.spread[k].mean.is_finite())
                .collect();
            k.sort_by(|&a, &b| s.x[a].total_cmp(&s.x[b]));
            if k.is_empty() {
                // no host entered this curve (e.g. none with N candidates)
                legend_line(
                    &mut ch,
                    &format!("{}: no hosts", s.name),
                    col.stroke_width(2),
                    false,
                )?;
                continue;
            }
            any_drawn = true;
            let y = |v: f64| at_floor(if v.is_finite() { v } else { 0.0 }, floor);
            let band = |hi: &dyn Fn(&Spread) -> f64, lo: &dyn Fn(&Spread) -> f64| {
                k.iter()
                    .map(|&i| (s.x[i], y(hi(&s.spread[i]))))
                    .chain(k.iter().rev().map(|&i| (s.x[i], y(lo(&s.spread[i])))))
                    .collect::<Vec<_>>()
            };
            if s.hosts_band {
                any_hosts_band = true;
                ch.draw_series(std::iter::once(Polygon::new(
                    band(&|s| s.p84, &|s| s.p16),
                    col.mix(HOSTS_ALPHA),
                )))?;
            }
            ch.draw_series(std::iter::once(Polygon::new(
                band(&|s| s.boot84, &|s| s.boot16),
                col.mix(BOOT_ALPHA),
            )))?;
            ch.draw_series(LineSeries::new(
                k.iter().map(|&i| (s.x[i], y(s.spread[i].mean))),
                col.stroke_width(2),
            ))?
            .label(
                if !k.is_empty() && k.iter().all(|&i| s.spread[i].mean < floor) {
                    format!("{}: below {} throughout", s.name, short_number(floor))
                } else {
                    s.name.clone()
                },
            )
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2)));
        }
        for &(x, col) in &self.vlines {
            if x.is_finite() {
                ch.draw_series(DashedLineSeries::new(
                    vec![(x, floor), (x, 1.0)],
                    6,
                    4,
                    col.stroke_width(2),
                ))?;
            }
        }
        if let Some((yv, label)) = &self.hline {
            ch.draw_series(DashedLineSeries::new(
                vec![(0.0, *yv), (xmax, *yv)],
                6,
                4,
                BLACK.stroke_width(1),
            ))?;
            legend_line(&mut ch, label, BLACK.stroke_width(1), true)?;
        }
        if self.legend {
            if any_drawn {
                legend_swatch(&mut ch, "bootstrap 16–84%", GREY.mix(BOOT_ALPHA))?;
            }
            if any_hosts_band {
                legend_swatch(&mut ch, "hosts 16–84%", GREY.mix(HOSTS_ALPHA + 0.05))?;
            }
            draw_legend(&mut ch, SeriesLabelPosition::UpperRight)?;
        }
        Ok(())
    }
}

impl Figure for ProbPanel<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        self.draw_on(root)
    }
}

/// Panels side by side under a common title.
struct Panels<'a> {
    title: String,
    panels: Vec<ProbPanel<'a>>,
}

impl Figure for Panels<'_> {
    fn size(&self) -> (u32, u32) {
        (520 * self.panels.len().max(1) as u32, 600)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let w = root.dim_in_pixel().0;
        let body = root.titled(
            &self.title,
            ("sans-serif", title_size(&self.title, w)).into_font(),
        )?;
        for (p, a) in self
            .panels
            .iter()
            .zip(body.split_evenly((1, self.panels.len().max(1))))
        {
            p.draw_on(&a)?;
        }
        Ok(())
    }
}

/// At most `most` values of N for the fraction-of-N figure: both ends of the range, N of the
/// all-of-N test when inside it, and evenly spaced ones between.
fn pick_ns(lo: usize, hi: usize, n_draw: usize, most: usize) -> Vec<usize> {
    let most = most.max(2);
    let mut ns: Vec<usize> = if hi - lo < most {
        (lo..=hi).collect()
    } else {
        (0..most)
            .map(|i| lo + ((hi - lo) as f64 * i as f64 / (most - 1) as f64).round() as usize)
            .collect()
    };
    if (lo..=hi).contains(&n_draw) && !ns.contains(&n_draw) {
        // replace the nearest interior value (the ends stay)
        if let Some(j) = (1..ns.len().saturating_sub(1)).min_by_key(|&j| ns[j].abs_diff(n_draw)) {
            ns[j] = n_draw;
        } else {
            ns.push(n_draw);
        }
    }
    ns.sort_unstable();
    ns.dedup();
    ns
}

/// Density (1/Gyr) of the observed quenching lookback times: each object a Gaussian of its
/// 1-sigma error (at least `min_sigma`), averaged over the objects, so it integrates to 1
/// like the infall-time histograms.
fn quench_density(objects: &[(f64, f64)], t: f64, min_sigma: f64) -> f64 {
    if objects.is_empty() {
        return 0.0;
    }
    let norm = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
    objects
        .iter()
        .map(|&(q, e)| {
            let s = e.max(min_sigma);
            let u = (t - q) / s;
            norm * (-0.5 * u * u).exp() / s
        })
        .sum::<f64>()
        / objects.len() as f64
}

/// Histograms of infall lookback times (density in 1/Gyr) with the observed quenching times.
struct InfallFig<'a> {
    series: Vec<(String, &'a Binned)>,
    /// Fine bins merged into one plotted bin.
    group: usize,
    /// Quenching lookback times of the sample and their errors (Gyr).
    observed: Vec<(f64, f64)>,
}

impl Figure for InfallFig<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let group = self.group.max(1);
        let hists: Vec<Vec<f64>> = self
            .series
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
        let w = self
            .series
            .first()
            .map(|(_, b)| b.width() * group as f64)
            .unwrap_or(1.0);
        let last = hists
            .iter()
            .filter_map(|h| h.iter().rposition(|&v| v > 0.0))
            .max()
            .unwrap_or(0);
        let obs_hi = self
            .observed
            .iter()
            .map(|&(q, e)| q + 2.0 * e.max(0.1))
            .fold(0.0f64, f64::max);
        let xmax = ((last + 1) as f64 * w).max(obs_hi).max(1e-3);
        let grid: Vec<f64> = (0..=300).map(|i| xmax * i as f64 / 300.0).collect();
        let dens: Vec<f64> = grid
            .iter()
            .map(|&t| quench_density(&self.observed, t, 0.1))
            .collect();
        let ymax = hists
            .iter()
            .flatten()
            .chain(&dens)
            .copied()
            .fold(0.0f64, f64::max)
            .max(1e-9)
            * 1.1;
        let mut ch = chart(root, "infall lookback times of the selected satellites", 70)
            .build_cartesian_2d(0.0..xmax, 0.0..ymax)?;
        draw_axes(
            &mut ch,
            "lookback time (Gyr)",
            "probability density (1/Gyr)",
        )?;
        for (i, ((name, _), h)) in self.series.iter().zip(&hists).enumerate() {
            let col = COLORS[i % COLORS.len()];
            let pts: Vec<(f64, f64)> = h
                .iter()
                .enumerate()
                .flat_map(|(k, &v)| [(k as f64 * w, v), ((k + 1) as f64 * w, v)])
                .collect();
            ch.draw_series(LineSeries::new(pts, col.stroke_width(2)))?
                .label(format!("infall: {name}"))
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2))
                });
        }
        if !self.observed.is_empty() {
            let tick = ymax * 0.06;
            for &(q, _) in &self.observed {
                ch.draw_series(std::iter::once(PathElement::new(
                    vec![(q, 0.0), (q, tick)],
                    BLACK.stroke_width(2),
                )))?;
            }
            legend_line(
                &mut ch,
                "observed quenching times (ticks)",
                BLACK.stroke_width(2),
                false,
            )?;
            ch.draw_series(DashedLineSeries::new(
                grid.iter().copied().zip(dens.iter().copied()),
                6,
                4,
                BLACK.stroke_width(2),
            ))?;
            legend_line(
                &mut ch,
                "the same, each a Gaussian of its error",
                BLACK.stroke_width(2),
                true,
            )?;
        }
        draw_legend(&mut ch, SeriesLabelPosition::UpperLeft)?;
        Ok(())
    }
}

/// A vertical line on a line figure: where, an optional shaded span, its label.
struct VLine {
    x: f64,
    span: Option<(f64, f64)>,
    label: String,
}

/// One line (a histogram outline or a cumulative distribution) with optional extras.
struct LineFig {
    title: String,
    xlabel: String,
    ylabel: String,
    pts: Vec<(f64, f64)>,
    log: bool,
    /// Legend name of the line (no legend without one).
    line_label: Option<String>,
    /// Text in a box in the upper right corner.
    notes: Vec<String>,
    vline: Option<VLine>,
    /// Markers and their legend entry.
    markers: Option<(String, Vec<(f64, f64)>)>,
    /// More lines, each with its legend entry (colours after the main line's).
    extra: Vec<(String, Vec<(f64, f64)>)>,
    legend_pos: SeriesLabelPosition,
}

impl LineFig {
    fn new(title: String, xlabel: &str, ylabel: &str, pts: Vec<(f64, f64)>, log: bool) -> Self {
        let pts = pts
            .into_iter()
            .filter(|(a, b)| a.is_finite() && b.is_finite() && (!log || (*a > 0.0 && *b > 0.0)))
            .collect();
        Self {
            title,
            xlabel: xlabel.into(),
            ylabel: ylabel.into(),
            pts,
            log,
            line_label: None,
            notes: Vec::new(),
            vline: None,
            markers: None,
            extra: Vec::new(),
            legend_pos: SeriesLabelPosition::UpperRight,
        }
    }

    /// Add a line with its legend entry (points kept as `new` keeps them).
    fn add_line(&mut self, label: String, pts: Vec<(f64, f64)>) {
        let log = self.log;
        let pts = pts
            .into_iter()
            .filter(|(a, b)| a.is_finite() && b.is_finite() && (!log || (*a > 0.0 && *b > 0.0)))
            .collect();
        self.extra.push((label, pts));
    }

    fn draw_in<'a, DB, X, Y>(&self, ch: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>) -> Res
    where
        DB: DrawingBackend + 'a,
        DB::ErrorType: 'static,
        X: Ranged<ValueType = f64> + ValueFormatter<f64>,
        Y: Ranged<ValueType = f64> + ValueFormatter<f64>,
    {
        draw_axes(ch, &self.xlabel, &self.ylabel)?;
        let (y0, y1) = {
            let r = ch.y_range();
            (r.start, r.end)
        };
        if let Some(v) = &self.vline {
            if let Some((a, b)) = v.span {
                ch.draw_series(std::iter::once(Rectangle::new(
                    [(a, y0), (b, y1)],
                    GREY.mix(0.15).filled(),
                )))?;
            }
            ch.draw_series(DashedLineSeries::new(
                vec![(v.x, y0), (v.x, y1)],
                8,
                5,
                BLACK.stroke_width(2),
            ))?;
            // the label beside the line, near the top, on the side with more room
            if !v.label.is_empty() {
                let (px, py) = ch.backend_coord(&(v.x, y1));
                let area = ch.plotting_area().strip_coord_spec();
                let (ax, ay) = area.get_base_pixel();
                let (aw, _) = area.dim_in_pixel();
                let left_of_line = px - ax > ax + aw as i32 - px;
                let style = ("sans-serif", LABEL_SIZE).into_font().color(&BLACK);
                let (style, x) = if left_of_line {
                    (style.pos(Pos::new(HPos::Right, VPos::Top)), px - 6)
                } else {
                    (style, px + 6)
                };
                area.draw(&Text::new(v.label.clone(), (x - ax, py + 8 - ay), style))?;
            }
        }
        let col = COLORS[0];
        let anno = ch.draw_series(LineSeries::new(self.pts.clone(), col.stroke_width(2)))?;
        if let Some(l) = &self.line_label {
            anno.label(l.clone()).legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2))
            });
        }
        for (k, (label, pts)) in self.extra.iter().enumerate() {
            let c = COLORS[(k + 1) % COLORS.len()];
            ch.draw_series(LineSeries::new(pts.clone(), c.stroke_width(2)))?
                .label(label.clone())
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], c.stroke_width(2))
                });
        }
        if let Some((label, pts)) = &self.markers {
            let mc = COLORS[1];
            ch.draw_series(
                pts.iter()
                    .map(|&p| Circle::new(p, 5, ShapeStyle::from(mc).filled())),
            )?
            .label(label.clone())
            .legend(move |(x, y)| Circle::new((x + 10, y), 5, ShapeStyle::from(mc).filled()));
        }
        draw_notes(ch, &self.notes)?;
        if self.line_label.is_some() || self.markers.is_some() || !self.extra.is_empty() {
            draw_legend(ch, self.legend_pos.clone())?;
        }
        Ok(())
    }
}

impl Figure for LineFig {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let xs = self
            .pts
            .iter()
            .chain(self.extra.iter().flat_map(|e| e.1.iter()))
            .map(|p| p.0)
            .chain(self.markers.iter().flat_map(|m| m.1.iter().map(|p| p.0)))
            .chain(self.vline.iter().flat_map(|v| {
                let (a, b) = v.span.unwrap_or((v.x, v.x));
                [v.x, a, b]
            }))
            .filter(|x| x.is_finite() && (!self.log || *x > 0.0));
        let (x0, x1) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |a, x| {
            (a.0.min(x), a.1.max(x))
        });
        let (y0, y1) = self
            .pts
            .iter()
            .chain(self.extra.iter().flat_map(|e| e.1.iter()))
            .map(|p| p.1)
            .chain(self.markers.iter().flat_map(|m| m.1.iter().map(|p| p.1)))
            .fold((f64::INFINITY, f64::NEG_INFINITY), |a, y| {
                (a.0.min(y), a.1.max(y))
            });
        if self.log {
            let mut ch = chart(root, &self.title, 70)
                .build_cartesian_2d((x0 / 1.5..x1 * 1.5).log_scale(), (y0..y1 * 1.5).log_scale())?;
            self.draw_in(&mut ch)
        } else {
            let mut ch = chart(root, &self.title, 70)
                .build_cartesian_2d(x0.min(0.0)..x1, y0.min(0.0)..y1 * 1.05)?;
            self.draw_in(&mut ch)
        }
    }
}

/// The host-mass trend, a line per cosmology (named by its label) and a marker per grid
/// cell: the median first-infall redshift of the selected satellites (left) and P(all N fell
/// in before z = 1) on the first-infall clock with its bootstrap 16–84% interval as error bars
/// (right; only with several cells).
struct CellFig<'a> {
    /// (cosmology index, median host mass, median first-infall z, few hosts) of cells with
    /// hosts; a cell of fewer than `FEW_HOSTS_FOR_INTERVAL` hosts is drawn open (the tables
    /// give it no interval).
    pts: Vec<(u16, f64, f64, bool)>,
    /// (cosmology index, median host mass, P at z = 1 with its spread) per cell.
    probs: Vec<(u16, f64, Spread)>,
    labels: Option<&'a crate::report::CellLabels>,
    n_draw: usize,
}

impl<'a> CellFig<'a> {
    fn new(
        res: &AnalysisResults,
        cells: &[crate::stats::cells::CellResults],
        labels: Option<&'a crate::report::CellLabels>,
    ) -> Self {
        let pts: Vec<(u16, f64, f64, bool)> = res
            .dependence
            .iter()
            .filter(|d| d.3 > 0.0 && d.4.is_finite())
            .map(|d| (d.0, d.3, d.4, (d.2 as u64) < FEW_HOSTS_FOR_INTERVAL))
            .collect();
        let probs = cells
            .iter()
            .filter_map(|c| {
                let mass = res
                    .dependence
                    .iter()
                    .find(|d| d.0 == c.cosmology && d.1 == c.mass_bin)
                    .map(|d| d.3)?;
                let (_, cv) = c
                    .results
                    .all_of_n_mc
                    .iter()
                    .find(|(k, _)| *k == Clock::FirstHostInfall)?;
                let k = cv.x.iter().position(|&z| (z - 1.0).abs() < 1e-9)?;
                Some((c.cosmology, mass, cv.spread[k]))
            })
            .filter(|p| p.1 > 0.0 && p.2.mean.is_finite())
            .collect();
        Self {
            pts,
            probs,
            labels,
            n_draw: res.n_draw,
        }
    }

    fn name(&self, c: u16) -> String {
        self.labels
            .and_then(|l| l.cosmologies.get(c as usize).cloned())
            .unwrap_or_else(|| format!("cosmology {c}"))
    }

    /// Whether any cell rests on too few hosts for an interval.
    fn any_few(&self) -> bool {
        self.pts.iter().any(|p| p.3)
            || self
                .probs
                .iter()
                .any(|p| p.2.hosts < FEW_HOSTS_FOR_INTERVAL)
    }

    /// A legend entry, with no data, saying what an open marker means.
    fn open_marker_note<DB: DrawingBackend>(
        ch: &mut ChartContext<
            '_,
            DB,
            Cartesian2d<LogCoord<f64>, plotters::coord::types::RangedCoordf64>,
        >,
    ) -> Res
    where
        DB::ErrorType: 'static,
    {
        ch.draw_series(std::iter::empty::<Circle<(f64, f64), i32>>())?
            .label(format!(
                "open: fewer than {FEW_HOSTS_FOR_INTERVAL} hosts (no interval)"
            ))
            .legend(|(x, y)| Circle::new((x + 10, y), 5, BLACK.stroke_width(2)));
        Ok(())
    }

    fn cosmologies(&self) -> Vec<u16> {
        let mut v: Vec<u16> = self.pts.iter().map(|p| p.0).collect();
        v.sort_unstable();
        v.dedup();
        v
    }

    fn draw_z<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let pts = &self.pts;
        let (m0, m1) = pts
            .iter()
            .fold((f64::INFINITY, 0.0f64), |a, p| (a.0.min(p.1), a.1.max(p.1)));
        let z1 = pts.iter().fold(0.0f64, |a, p| a.max(p.2));
        let title = if pts.len() == 1 {
            "median first-infall z (one grid cell)"
        } else {
            "median first-infall z by grid cell"
        };
        let mut ch = chart(root, title, 70)
            .build_cartesian_2d((m0 / 1.5..m1 * 1.5).log_scale(), 0.0..(z1 * 1.15).max(1.0))?;
        draw_axes(
            &mut ch,
            "median host mass (Msun)",
            "median first-infall redshift",
        )?;
        let cosmos = self.cosmologies();
        for (k, c) in cosmos.iter().enumerate() {
            let col = cell_color(k, cosmos.len());
            let mut line: Vec<(f64, f64, bool)> = pts
                .iter()
                .filter(|p| p.0 == *c)
                .map(|p| (p.1, p.2, p.3))
                .collect();
            line.sort_by(|a, b| a.0.total_cmp(&b.0));
            ch.draw_series(LineSeries::new(
                line.iter().map(|p| (p.0, p.1)),
                col.stroke_width(2),
            ))?;
            // an open marker is white inside (the line does not run through it)
            ch.draw_series(
                line.iter()
                    .filter(|p| p.2)
                    .map(|p| Circle::new((p.0, p.1), 5, WHITE.filled())),
            )?;
            ch.draw_series(line.iter().map(|&(m, z, few)| {
                Circle::new(
                    (m, z),
                    5,
                    if few {
                        col.stroke_width(2)
                    } else {
                        col.filled()
                    },
                )
            }))?
            .label(self.name(*c))
            .legend(move |(x, y)| Circle::new((x + 10, y), 5, col.filled()));
        }
        if self.any_few() {
            Self::open_marker_note(&mut ch)?;
        }
        if cosmos.len() > 1 || self.any_few() {
            draw_legend(&mut ch, SeriesLabelPosition::UpperRight)?;
        }
        Ok(())
    }

    fn draw_p<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let (m0, m1) = self
            .probs
            .iter()
            .fold((f64::INFINITY, 0.0f64), |a, p| (a.0.min(p.1), a.1.max(p.1)));
        let top = self
            .probs
            .iter()
            .fold(0.0f64, |a, p| a.max(p.2.boot84).max(p.2.mean));
        let title = format!("P(all {} fell in before z = 1), first infall", self.n_draw);
        let mut ch = chart(root, &title, 70).build_cartesian_2d(
            (m0 / 1.5..m1 * 1.5).log_scale(),
            0.0..(top * 1.2).clamp(1e-3, 1.0),
        )?;
        draw_axes(
            &mut ch,
            "median host mass (Msun)",
            "mean over hosts, bootstrap 16–84% bars",
        )?;
        let cosmos = self.cosmologies();
        for (k, c) in cosmos.iter().enumerate() {
            let col = cell_color(k, cosmos.len());
            let mut line: Vec<(f64, Spread)> = self
                .probs
                .iter()
                .filter(|p| p.0 == *c)
                .map(|p| (p.1, p.2))
                .collect();
            line.sort_by(|a, b| a.0.total_cmp(&b.0));
            // a cell of few hosts: an open marker and no bar (the tables give no interval)
            let (few, enough): (Vec<_>, Vec<_>) = line
                .iter()
                .partition(|(_, sp)| sp.hosts < FEW_HOSTS_FOR_INTERVAL);
            ch.draw_series(LineSeries::new(
                line.iter().map(|(m, sp)| (*m, sp.mean)),
                col.stroke_width(2),
            ))?;
            ch.draw_series(enough.iter().map(|(m, sp)| {
                ErrorBar::new_vertical(*m, sp.boot16, sp.mean, sp.boot84, col.filled(), 10)
            }))?
            .label(self.name(*c))
            .legend(move |(x, y)| Circle::new((x + 10, y), 5, col.filled()));
            for style in [WHITE.filled(), col.stroke_width(2)] {
                ch.draw_series(
                    few.iter()
                        .map(|(m, sp)| Circle::new((*m, sp.mean), 5, style)),
                )?;
            }
        }
        if self.any_few() {
            Self::open_marker_note(&mut ch)?;
        }
        if cosmos.len() > 1 || self.any_few() {
            draw_legend(&mut ch, SeriesLabelPosition::UpperRight)?;
        }
        Ok(())
    }
}

impl Figure for CellFig<'_> {
    fn size(&self) -> (u32, u32) {
        if self.probs.len() > 1 {
            (SIZE.0 * 2, SIZE.1)
        } else {
            SIZE
        }
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        if self.probs.len() > 1 {
            let (l, r) = root.split_horizontally(SIZE.0);
            self.draw_z(&l)?;
            self.draw_p(&r)
        } else {
            self.draw_z(root)
        }
    }
}

/// The all-of-N curve of every grid cell on the first-infall clock, each with its bootstrap
/// band, named "cosmology, host mass" (only with several cells).
struct CellCurves<'a> {
    panel: ProbPanel<'a>,
}

impl Figure for CellCurves<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        self.panel.draw_on(root)
    }
}

/// Per observed object and clock: the fraction of phase-space matches that fell in before
/// the object quenched (mean over hosts, the bootstrap and host-to-host 16–84% ranges).
struct MatchesFig<'a> {
    /// Object ids in sample order, with the number of matches (first clock).
    objects: Vec<(String, usize)>,
    /// (object index, clock index, spread)
    rows: Vec<(usize, usize, &'a Spread)>,
    clocks: Vec<&'static str>,
}

impl<'a> MatchesFig<'a> {
    fn new(matches: &'a [(String, Clock, Vec<f64>, Spread, usize)]) -> Self {
        let mut objects: Vec<(String, usize)> = Vec::new();
        let mut clocks: Vec<&'static str> = Vec::new();
        let mut rows = Vec::new();
        for (id, clock, _, s, n) in matches {
            let oi = match objects.iter().position(|o| &o.0 == id) {
                Some(i) => i,
                None => {
                    objects.push((id.clone(), *n));
                    objects.len() - 1
                }
            };
            let ci = match clocks.iter().position(|c| *c == clock.name()) {
                Some(i) => i,
                None => {
                    clocks.push(clock.name());
                    clocks.len() - 1
                }
            };
            rows.push((oi, ci, s));
        }
        Self {
            objects,
            rows,
            clocks,
        }
    }

    fn labels(&self) -> Vec<String> {
        self.objects
            .iter()
            .map(|(id, n)| {
                if *n == 0 {
                    format!("{id} (no matches)")
                } else {
                    format!("{id} ({n})")
                }
            })
            .collect()
    }
}

impl Figure for MatchesFig<'_> {
    fn size(&self) -> (u32, u32) {
        (900, (170 + 34 * self.objects.len() as u32).clamp(500, 4000))
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let labels = self.labels();
        let label_w = labels
            .iter()
            .map(|l| text_width(l, LABEL_SIZE))
            .max()
            .unwrap_or(0)
            + 16;
        let n = self.objects.len().max(1) as f64;
        let mut ch = chart(
            root,
            "P(a phase-space match fell in before the object quenched)",
            label_w,
        )
        .build_cartesian_2d(0.0..1.0, -0.6..n - 0.4)?;
        ch.configure_mesh()
            .disable_y_mesh()
            .y_labels(0)
            .x_desc("fraction of the matches (mean over hosts); in parentheses: number of matches")
            .x_label_formatter(&|v| short_number(*v))
            .label_style(("sans-serif", LABEL_SIZE))
            .draw()?;
        // the first object at the top
        let y_of = |i: usize| n - 1.0 - i as f64;
        let nc = self.clocks.len().max(1) as f64;
        let dy = |c: usize| 0.22 * (c as f64 - (nc - 1.0) / 2.0);
        for &(i, c, s) in &self.rows {
            if !s.mean.is_finite() {
                continue;
            }
            let col = COLORS[c % COLORS.len()];
            let y = y_of(i) - dy(c);
            ch.draw_series(std::iter::once(PathElement::new(
                vec![(s.p16, y), (s.p84, y)],
                col.mix(0.6).stroke_width(1),
            )))?;
            ch.draw_series(std::iter::once(PathElement::new(
                vec![(s.boot16, y), (s.boot84, y)],
                col.stroke_width(4),
            )))?;
            ch.draw_series(std::iter::once(Circle::new(
                (s.mean, y),
                4,
                ShapeStyle::from(col).filled(),
            )))?;
        }
        for (c, name) in self.clocks.iter().enumerate() {
            let col = COLORS[c % COLORS.len()];
            ch.draw_series(std::iter::empty::<PathElement<(f64, f64)>>())?
                .label(*name)
                .legend(move |(x, y)| Circle::new((x + 10, y), 4, ShapeStyle::from(col).filled()));
        }
        legend_line(&mut ch, "bootstrap 16–84%", GREY.stroke_width(4), false)?;
        legend_line(&mut ch, "hosts 16–84%", GREY.stroke_width(1), false)?;
        // object names left of the axis, at their rows
        let style = ("sans-serif", LABEL_SIZE)
            .into_font()
            .color(&BLACK)
            .pos(Pos::new(HPos::Right, VPos::Center));
        for (i, l) in labels.iter().enumerate() {
            let (px, py) = ch.backend_coord(&(0.0, y_of(i)));
            let base = root.get_base_pixel();
            root.draw(&Text::new(
                l.clone(),
                (px - 8 - base.0, py - base.1),
                style.clone(),
            ))?;
        }
        draw_legend(&mut ch, SeriesLabelPosition::LowerRight)?;
        Ok(())
    }
}

/// The backsplash fraction in each shell outside the host, with the fraction over the whole
/// range.
struct BacksplashFig<'a> {
    shells: &'a [ShellResult],
    overall: Spread,
}

impl Figure for BacksplashFig<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let lo = self
            .shells
            .iter()
            .map(|s| s.lo_over_rvir)
            .fold(f64::INFINITY, f64::min);
        let hi = self
            .shells
            .iter()
            .map(|s| s.hi_over_rvir)
            .fold(f64::NEG_INFINITY, f64::max);
        let pad = 0.05 * (hi - lo);
        let mut ch = chart(root, "backsplash fraction by shell around the host", 70)
            .build_cartesian_2d(lo - pad..hi + pad, 0.0..1.0)?;
        draw_axes(
            &mut ch,
            "distance today r / R_vir (shell edges)",
            "fraction of haloes once inside R_vir",
        )?;
        let col = COLORS[0];
        let text = ("sans-serif", LABEL_SIZE)
            .into_font()
            .color(&BLACK)
            .pos(Pos::new(HPos::Center, VPos::Bottom));
        for s in self.shells {
            let f = &s.fraction;
            if !f.mean.is_finite() {
                continue;
            }
            let gap = 0.02 * (s.hi_over_rvir - s.lo_over_rvir);
            let (a, b) = (s.lo_over_rvir + gap, s.hi_over_rvir - gap);
            for (lo, hi, shade) in [
                (f.p16, f.p84, HOSTS_ALPHA + 0.05),
                (f.boot16, f.boot84, BOOT_ALPHA),
            ] {
                if lo.is_finite() && hi.is_finite() {
                    ch.draw_series(std::iter::once(Rectangle::new(
                        [(a, lo), (b, hi)],
                        col.mix(shade).filled(),
                    )))?;
                }
            }
            ch.draw_series(std::iter::once(PathElement::new(
                vec![(a, f.mean), (b, f.mean)],
                col.stroke_width(3),
            )))?;
            let top = if f.p84.is_finite() { f.p84 } else { f.mean };
            let (px, py) = ch.backend_coord(&(0.5 * (a + b), top.min(0.92)));
            let base = root.get_base_pixel();
            root.draw(&Text::new(
                format!("{:.1} / {:.1}", s.count_mean, s.field_mean),
                (px - base.0, py - 6 - base.1),
                text.clone(),
            ))?;
        }
        legend_line(&mut ch, "mean over hosts", col.stroke_width(3), false)?;
        legend_swatch(&mut ch, "bootstrap 16–84%", col.mix(BOOT_ALPHA))?;
        legend_swatch(&mut ch, "hosts 16–84%", col.mix(HOSTS_ALPHA + 0.05))?;
        if self.overall.mean.is_finite() {
            ch.draw_series(DashedLineSeries::new(
                vec![(lo, self.overall.mean), (hi, self.overall.mean)],
                6,
                4,
                BLACK.stroke_width(1),
            ))?;
            legend_line(
                &mut ch,
                &format!(
                    "all shells ({}–{} R_vir): {:.2}",
                    short_number(lo),
                    short_number(hi),
                    self.overall.mean
                ),
                BLACK.stroke_width(1),
                true,
            )?;
        }
        legend_swatch(
            &mut ch,
            "numbers: backsplash / field haloes per host",
            WHITE.mix(0.0),
        )?;
        draw_legend(&mut ch, SeriesLabelPosition::UpperRight)?;
        Ok(())
    }
}

/// The separation of the pairs against lookback time: per pair cell, the median over pairs
/// and the pair-to-pair 16–84% band.
/// (lookback time in Gyr, 16%, median, 84%) of the separation in kpc.
type SeparationPoint = (f64, f64, f64, f64);

struct PairSeparationFig {
    /// (name, colour, points in order of lookback time).
    series: Vec<(String, RGBColor, Vec<SeparationPoint>)>,
    xlabel: String,
}

impl PairSeparationFig {
    /// From the binned histories (log10 kpc per column of `z`), each cell on its own
    /// cosmology's clock; points where a quantile is missing are left out.
    fn new(
        geometry: &crate::stats::pairs::PairGeometry,
        theories: &[LinearTheory],
        labels: Option<&crate::report::CellLabels>,
    ) -> Self {
        let n = geometry.cells.len();
        let mut cells: Vec<&crate::stats::pairs::CellSeparations> = geometry.cells.iter().collect();
        cells.sort_by_key(|c| c.key);
        let series = cells
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let cosmo = theories
                    .get(c.key.0 as usize)
                    .or(theories.first())
                    .map(|t| t.cosmology());
                let mut pts: Vec<SeparationPoint> = geometry
                    .z
                    .iter()
                    .zip(&c.history)
                    .filter_map(|(&z, b)| {
                        let [p16, p50, p84] = crate::stats::pairs::separation_quantiles(b);
                        let t = cosmo?.lookback_gyr(z);
                        [t, p16, p50, p84]
                            .iter()
                            .all(|v| v.is_finite())
                            .then_some((t, p16, p50, p84))
                    })
                    .collect();
                pts.sort_by(|a, b| a.0.total_cmp(&b.0));
                let name = match labels {
                    Some(l) => {
                        let (a, b) = l.of(c.key.0, c.key.1);
                        format!("{a}, {b} Msun ({} pairs)", c.n_pairs)
                    }
                    None => format!("cell ({}, {}) ({} pairs)", c.key.0, c.key.1, c.n_pairs),
                };
                (name, cell_color(i, n), pts)
            })
            .collect();
        let several = cells
            .iter()
            .any(|c| c.key.0 != cells.first().map_or(0, |f| f.key.0));
        Self {
            series,
            xlabel: if several {
                "lookback time in each cell's cosmology (Gyr)".into()
            } else {
                "lookback time (Gyr)".into()
            },
        }
    }
}

impl Figure for PairSeparationFig {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res
    where
        DB::ErrorType: 'static,
    {
        let pts = self.series.iter().flat_map(|s| s.2.iter());
        let (xmax, ymax) = pts.fold((0.0f64, 0.0f64), |a, p| (a.0.max(p.0), a.1.max(p.3)));
        let mut ch = chart(root, "separation of the pairs", 70)
            .build_cartesian_2d(0.0..xmax.max(1e-3), 0.0..(ymax * 1.08).max(1.0))?;
        draw_axes(&mut ch, &self.xlabel, "separation (kpc)")?;
        for (name, col, p) in &self.series {
            let col = *col;
            if p.is_empty() {
                continue;
            }
            let band: Vec<(f64, f64)> = p
                .iter()
                .map(|q| (q.0, q.3))
                .chain(p.iter().rev().map(|q| (q.0, q.1)))
                .collect();
            ch.draw_series(std::iter::once(Polygon::new(band, col.mix(BOOT_ALPHA))))?;
            ch.draw_series(LineSeries::new(
                p.iter().map(|q| (q.0, q.2)),
                col.stroke_width(2),
            ))?
            .label(name.clone())
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], col.stroke_width(2)));
        }
        legend_swatch(&mut ch, "pairs 16–84%", GREY.mix(BOOT_ALPHA))?;
        legend_line(&mut ch, "median over pairs", GREY.stroke_width(2), false)?;
        // the legend where the curves leave room: below them when the separations are
        // largest at the earliest times shown
        let late_high = self
            .series
            .iter()
            .filter_map(|s| s.2.last())
            .any(|q| q.3 > 0.5 * ymax);
        draw_legend(
            &mut ch,
            if late_high {
                SeriesLabelPosition::LowerRight
            } else {
                SeriesLabelPosition::UpperRight
            },
        )?;
        Ok(())
    }
}

/// The disruption model the run's selection used, in words (for the pericentre figure).
fn survival_words(survival: Survival, orbits: &OrbitOptions) -> String {
    let tide = orbits.disc_tide_ratio > 0.0 && orbits.stripping;
    let tide_words = if orbits.disc_tide_loss_power > 0.0 {
        format!(
            "disc tide (disc_tide_ratio = {}, disc_tide_loss_power = {})",
            orbits.disc_tide_ratio, orbits.disc_tide_loss_power
        )
    } else {
        format!("disc tide (disc_tide_ratio = {})", orbits.disc_tide_ratio)
    };
    match (survival, tide) {
        (Survival::Physical, true) => format!("survival: {tide_words}"),
        (Survival::Physical, false) => "survival: tidal stripping only (no disc model)".into(),
        (Survival::Pericentre, true) => format!(
            "survival: {tide_words} + {} kpc pericentre cut",
            short_number(orbits.pericentre_cut_kpc)
        ),
        (Survival::Pericentre, false) => format!(
            "survival: {} kpc pericentre cut",
            short_number(orbits.pericentre_cut_kpc)
        ),
    }
}

/// Write every figure into `dir`, each as PNG and SVG; returns the files written (a figure
/// with nothing to draw, e.g. the sample's without a sample, is not written). The lookback
/// axis of the curves over redshift uses the first cosmology (and says so when there are
/// several: a pooled curve over z has no single lookback axis).
pub fn write_figures(
    dir: &Path,
    res: &AnalysisResults,
    fig: &FigureData,
    inp: &FigureInputs,
) -> Result<Vec<PathBuf>, String> {
    let cosmo = inp
        .theories
        .first()
        .ok_or("no cosmology to draw a lookback axis with")?
        .cosmology();
    let lookback_label = if inp.theories.len() > 1 {
        "lookback time in the first cosmology (Gyr)"
    } else {
        "lookback time (Gyr)"
    };
    ensure_font()?;
    let floor = probability_floor(inp.tests.draws);
    let mut out = Vec::new();
    let observed: Vec<(f64, f64)> = inp
        .sample
        .map(|s| {
            s.objects
                .iter()
                .map(|o| (o.t_quench_lookback_gyr, o.t_quench_err_gyr))
                .collect()
        })
        .unwrap_or_default();

    // all of N, against redshift and lookback time
    let series = |to_x: &dyn Fn(f64) -> f64| -> Vec<ProbSeries> {
        res.all_of_n_mc
            .iter()
            .enumerate()
            .map(|(i, (c, cv))| ProbSeries {
                name: c.name().to_string(),
                color: COLORS[i % COLORS.len()],
                x: cv.x.iter().map(|&z| to_x(z)).collect(),
                spread: &cv.spread,
                hosts_band: true,
            })
            .collect()
    };
    let panel = |title: String, xlabel: &str, series| prob_panel(title, xlabel, floor, series);
    let n = res.n_draw;
    save(
        dir,
        "all_of_n_vs_redshift",
        &panel(
            format!("P(all {n} fell in before z)"),
            "redshift z",
            series(&|z| z),
        ),
        &mut out,
    )?;
    let mut by_t = panel(
        format!("P(all {n} fell in earlier than a lookback time)"),
        lookback_label,
        series(&|z| cosmo.lookback_gyr(z)),
    );
    by_t.marks = observed.iter().map(|o| o.0).collect();
    by_t.marks_label = "observed quenching times".into();
    save(dir, "all_of_n_vs_lookback", &by_t, &mut out)?;

    // fraction of N: a panel per clock, a few N each
    let o = inp.tests;
    let ns = pick_ns(o.n_range[0], o.n_range[1], n, 5);
    let mut clocks: Vec<Clock> = res.fraction_of_n.iter().map(|f| f.0).collect();
    clocks.dedup();
    if !clocks.is_empty() {
        let panels = clocks
            .iter()
            .enumerate()
            .map(|(k, clock)| {
                let series = res
                    .fraction_of_n
                    .iter()
                    .filter(|f| f.0 == *clock && ns.contains(&f.1))
                    .enumerate()
                    .map(|(i, (_, nn, cv))| ProbSeries {
                        name: format!("N = {nn}"),
                        color: COLORS[i % COLORS.len()],
                        x: cv.x.clone(),
                        spread: &cv.spread,
                        hosts_band: false,
                    })
                    .collect();
                ProbPanel {
                    legend: k == 0,
                    ..panel(clock.name().to_string(), "redshift z", series)
                }
            })
            .collect();
        save(
            dir,
            "fraction_of_n",
            &Panels {
                title: format!(
                    "P(at least {}% of N fell in before z), exact",
                    short_number(100.0 * o.fraction)
                ),
                panels,
            },
            &mut out,
        )?;
    }

    // the sample's tests
    if !res.quench.is_empty() {
        let n_obj = inp.sample.map(|s| s.objects.len()).unwrap_or(n);
        let series = res
            .quench
            .iter()
            .enumerate()
            .map(|(i, (c, cv, lim))| ProbSeries {
                name: if lim.tau.is_finite() {
                    format!("{} (τ ≤ {:.2} Gyr)", c.name(), lim.tau)
                } else {
                    format!("{} (no τ allowed)", c.name())
                },
                color: COLORS[i % COLORS.len()],
                x: cv.x.clone(),
                spread: &cv.spread,
                hosts_band: true,
            })
            .collect();
        let mut p = panel(
            format!("P(all {n_obj} objects quenched at least τ after infall)"),
            "environmental quenching delay τ (Gyr)",
            series,
        );
        p.hline = Some((
            (1.0 - o.confidence).max(floor),
            format!("1 − confidence = {}", short_number(1.0 - o.confidence)),
        ));
        p.vlines = res
            .quench
            .iter()
            .enumerate()
            .map(|(i, q)| (q.2.tau, COLORS[i % COLORS.len()]))
            .collect();
        save(dir, "quenching_delay", &p, &mut out)?;
    }
    if !res.matches.is_empty() {
        save(
            dir,
            "phase_space_matches",
            &MatchesFig::new(&res.matches),
            &mut out,
        )?;
    }

    // infall-time distributions with the sample's quenching times
    let infall: Vec<(String, &Binned)> = res
        .infall_lookbacks
        .iter()
        .map(|(c, v)| (c.name().to_string(), v))
        .collect();
    save(
        dir,
        "infall_times",
        &InfallFig {
            series: infall,
            group: 10,
            observed: observed.clone(),
        },
        &mut out,
    )?;

    // pericentres of the selected satellites (fixed bins), normalised over every selected
    // satellite, so the density integrates to the fraction with a pericentre inside the range
    let peri = &fig.peri_kpc;
    let w = peri.width();
    let tot: f64 = (peri.total() + peri.missing).max(1.0);
    let pts: Vec<(f64, f64)> = peri
        .counts
        .iter()
        .enumerate()
        .flat_map(|(k, &c)| {
            let y = c / (tot * w);
            [
                (peri.lo + k as f64 * w, y),
                (peri.lo + (k + 1) as f64 * w, y),
            ]
        })
        .collect();
    let mut pf = LineFig::new(
        "smallest pericentre of the selected satellites".into(),
        "r_peri (kpc)",
        "probability density (1/kpc)",
        pts,
        false,
    );
    pf.notes = vec![
        survival_words(o.selection.survival, inp.orbits),
        if o.selection.survival == Survival::Pericentre {
            "(dashed: the pericentre cut)".into()
        } else {
            String::new()
        },
        format!(
            "{:.0}% with no pericentre yet, {:.0}% beyond {} kpc",
            100.0 * peri.missing / tot,
            100.0 * peri.above / tot,
            short_number(peri.hi)
        ),
    ];
    if o.selection.survival == Survival::Pericentre {
        pf.vline = Some(VLine {
            x: inp.orbits.pericentre_cut_kpc,
            span: None,
            label: String::new(),
        });
    }
    if peri.total() > 0.0 {
        save(dir, "pericentres", &pf, &mut out)?;
    }

    // mass function: mean N(> m_bound / M_host) per host inside R_vir, with the resolution
    let cumulative = |lm: &crate::stats::intervals::Binned, hosts: usize| {
        let nh = hosts.max(1) as f64;
        let mut pts = Vec::new();
        let mut acc = 0.0;
        for k in (0..lm.counts.len()).rev() {
            acc += lm.counts[k];
            pts.push((10f64.powf(lm.lo + lm.width() * k as f64), acc / nh));
        }
        pts
    };
    let mut mf = LineFig::new(
        "surviving subhaloes inside R_vir".into(),
        "m_bound / M_host",
        "N(> m) per host",
        cumulative(&fig.log_mass_ratio, fig.n_hosts),
        true,
    );
    // a sweep's cosmologies each get their own line beside the pooled one (a walkthrough saw
    // warm dark matter's suppression vanish in the pooled curve)
    let per_cosmology: Vec<(usize, &(crate::stats::intervals::Binned, usize))> = fig
        .log_mass_ratio_by_cosmology
        .iter()
        .enumerate()
        .filter(|(_, (_, n))| *n > 0)
        .collect();
    if per_cosmology.len() > 1 {
        mf.line_label = Some("all cosmologies".into());
        for (k, (lm, n)) in per_cosmology {
            let name = inp
                .labels
                .and_then(|l| l.cosmologies.get(k).cloned())
                .unwrap_or_else(|| format!("cosmology {k}"));
            mf.add_line(name, cumulative(lm, *n));
        }
    }
    let hm = &fig.host_m_vir_msun;
    let m_host = hm.geometric_mean();
    if m_host.is_finite() && inp.resolution_msun > 0.0 {
        let several = hm.max > hm.min * (1.0 + 1e-6);
        mf.vline = Some(VLine {
            x: inp.resolution_msun / m_host,
            span: several.then(|| (inp.resolution_msun / hm.max, inp.resolution_msun / hm.min)),
            label: format!(
                "tree resolution {} Msun{}",
                short_number(inp.resolution_msun),
                if several {
                    " / mean M_host (shaded: all hosts)"
                } else {
                    " (at infall)"
                }
            ),
        });
    }
    if !mf.pts.is_empty() {
        save(dir, "subhalo_mass_function", &mf, &mut out)?;
    }

    // radial distribution of the selected satellites, with the sample's distances
    let rad = &fig.r_over_rvir;
    // every selected satellite counts in N (one exactly on the outer edge is `above`)
    let totr: f64 = (rad.counts.iter().sum::<f64>() + rad.above).max(1.0);
    let mut pts = vec![(rad.lo, 0.0)];
    let mut acc = 0.0;
    for (k, c) in rad.counts.iter().enumerate() {
        acc += c;
        pts.push((rad.lo + (k + 1) as f64 * rad.width(), acc / totr));
    }
    let mut rf = LineFig::new(
        "radial distribution of the selected satellites".into(),
        "r / R_vir",
        "N(< r) / N",
        pts,
        false,
    );
    rf.line_label = Some("mock satellites".into());
    rf.legend_pos = SeriesLabelPosition::LowerRight;
    let r_vir = fig.host_r_vir_kpc.geometric_mean();
    if let (Some(s), true) = (inp.sample, r_vir.is_finite()) {
        let mut r: Vec<f64> = s.objects.iter().map(|o| o.r_gc_kpc / r_vir).collect();
        r.sort_by(|a, b| a.total_cmp(b));
        let m = r.len() as f64;
        let pts = r
            .iter()
            .enumerate()
            .map(|(i, &x)| (x, (i + 1) as f64 / m))
            .collect();
        rf.markers = Some((
            format!(
                "observed sample (r_gc / {} kpc{})",
                short_number(r_vir.round()),
                if fig.host_r_vir_kpc.max > fig.host_r_vir_kpc.min * (1.0 + 1e-6) {
                    ", the hosts' geometric-mean R_vir"
                } else {
                    ", the hosts' R_vir"
                }
            ),
            pts,
        ));
    }
    if totr > 0.0 && rad.counts.iter().sum::<f64>() + rad.above > 0.0 {
        save(dir, "radial_distribution", &rf, &mut out)?;
    }

    // backsplash by shell (not for a grid of pairs only: the test leaves pair hosts out)
    if !res.backsplash_shells.is_empty() && res.backsplash_fraction.hosts > 0 {
        save(
            dir,
            "backsplash_shells",
            &BacksplashFig {
                shells: &res.backsplash_shells,
                overall: res.backsplash_fraction,
            },
            &mut out,
        )?;
    }

    // the pairs' separation histories (each pair once)
    if !fig.pairs.cells.is_empty() {
        let pf = PairSeparationFig::new(&fig.pairs, inp.theories, inp.labels);
        if pf.series.iter().any(|s| !s.2.is_empty()) {
            save(dir, "pair_separation", &pf, &mut out)?;
        }
    }

    let cells = CellFig::new(res, inp.cells, inp.labels);
    if !cells.pts.is_empty() {
        save(dir, "dependence_on_host_mass", &cells, &mut out)?;
    }
    if inp.cells.len() > 1 {
        let n = inp.cells.len();
        let series: Vec<ProbSeries> = inp
            .cells
            .iter()
            .enumerate()
            .filter_map(|(i, c)| {
                let (_, cv) = c
                    .results
                    .all_of_n_mc
                    .iter()
                    .find(|(k, _)| *k == Clock::FirstHostInfall)?;
                let name = match inp.labels {
                    Some(l) => {
                        let (a, b) = l.of(c.cosmology, c.mass_bin);
                        format!("{a}, {b} Msun")
                    }
                    None => format!("cell ({}, {})", c.cosmology, c.mass_bin),
                };
                Some(ProbSeries {
                    name,
                    color: cell_color(i, n),
                    x: cv.x.clone(),
                    spread: &cv.spread,
                    hosts_band: false,
                })
            })
            .collect();
        let panel = prob_panel(
            format!(
                "P(all {} fell in before z) by grid cell, first infall",
                res.n_draw
            ),
            "redshift z",
            floor,
            series,
        );
        save(dir, "all_of_n_by_cell", &CellCurves { panel }, &mut out)?;
    }
    Ok(out)
}

/// The figures among `files`, by name, for a one-line listing: "a, b (each as .png and
/// .svg)".
pub fn listing(files: &[PathBuf]) -> String {
    let names: Vec<String> = files
        .iter()
        .filter(|p| p.extension().is_some_and(|e| e == "png"))
        .filter_map(|p| p.file_stem().map(|s| s.to_string_lossy().into_owned()))
        .collect();
    format!("{} (each as .png and .svg)", names.join(", "))
}

#[cfg(test)]
mod tests {

    /// Every cell has its own colour: tab10 up to ten cells, hues around the wheel beyond
    /// (a sweep of 5 cosmologies x 4 masses has 20 distinct colours).
    #[test]
    fn cell_colours_are_distinct() {
        for n in [1, 3, 5, 10, 11, 20, 60] {
            let c: Vec<(u8, u8, u8)> = (0..n)
                .map(|i| {
                    let RGBColor(r, g, b) = cell_color(i, n);
                    (r, g, b)
                })
                .collect();
            for i in 0..n {
                for j in 0..i {
                    assert_ne!(c[i], c[j], "n = {n}: cells {i} and {j}");
                }
            }
        }
        assert_eq!(cell_color(0, 3), CELL_COLORS[0]);
    }

    use super::*;
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

    /// 1e-4 up to 10^4 draws, then the decade at or below 1/draws; zeros and tiny values
    /// are drawn at the floor, NaN never reaches it (curves skip it), 1 stays 1.
    #[test]
    fn probability_floor_and_clamping() {
        assert_eq!(probability_floor(100), 1e-4);
        assert_eq!(probability_floor(500), 1e-4);
        assert_eq!(probability_floor(10_000), 1e-4);
        assert_eq!(probability_floor(100_000), 1e-5);
        assert_eq!(probability_floor(300_000), 1e-6);
        assert_eq!(probability_floor(10_000_000), 1e-7);
        for d in [100, 777, 10_000, 12_345, 1_000_000, 3_000_000] {
            let f = probability_floor(d);
            assert!(f <= 1.0 / d as f64 && f <= 1e-4, "{d}: {f}");
            assert!(f > 0.1 / d as f64 || f == 1e-4, "{d}: {f}");
        }
        assert_eq!(at_floor(0.0, 1e-4), 1e-4);
        assert_eq!(at_floor(3e-5, 1e-4), 1e-4);
        assert_eq!(at_floor(0.25, 1e-4), 0.25);
        assert_eq!(at_floor(1.0, 1e-4), 1.0);
        assert_eq!(
            probability_label(1e-4),
            "probability (values below 1e-4 drawn at 1e-4)"
        );
    }

    /// Titles shrink until they fit the figure's width; the figures' titles fit at a
    /// readable size.
    #[test]
    fn titles_fit_the_figure() {
        ensure_font().unwrap();
        let short = "surviving subhaloes inside R_vir";
        assert_eq!(title_size(short, SIZE.0), TITLE_MAX);
        let long = "smallest pericentre of the selected satellites (8% with none yet, 0% beyond 300 kpc) and more words";
        let s = title_size(long, SIZE.0);
        assert!(s < TITLE_MAX);
        assert!(s == TITLE_MIN || text_width(long, s) <= SIZE.0 - 2 * MARGIN);
        for (t, w) in [
            ("P(all 12 fell in earlier than a lookback time)", SIZE.0),
            ("P(all 12 objects quenched at least τ after infall)", SIZE.0),
            (
                "P(a phase-space match fell in before the object quenched)",
                SIZE.0,
            ),
            ("infall lookback times of the selected satellites", SIZE.0),
            (
                "median first-infall z of the selected satellites by grid cell",
                SIZE.0,
            ),
            ("backsplash fraction by shell around the host", SIZE.0),
            ("P(at least 75% of N fell in before z), exact", 1560),
            ("first_host_infall", 520),
        ] {
            let s = title_size(t, w);
            assert!(s >= 18, "{t}: {s}");
            assert!(text_width(t, s) <= w - 2 * MARGIN, "{t}");
        }
    }

    #[test]
    fn values_of_n_for_fraction_of_n() {
        assert_eq!(pick_ns(6, 20, 12, 5), vec![6, 10, 12, 17, 20]);
        assert_eq!(pick_ns(6, 20, 11, 5), vec![6, 11, 13, 17, 20]);
        assert_eq!(pick_ns(6, 20, 30, 5), vec![6, 10, 13, 17, 20]);
        assert_eq!(pick_ns(3, 4, 3, 5), vec![3, 4]);
        assert_eq!(pick_ns(5, 5, 5, 5), vec![5]);
    }

    /// The observed quenching times as a density: integrates to 1 and peaks at a lone
    /// object's time; an error of 0 uses the smallest width.
    #[test]
    fn quenching_density_is_normalised() {
        let objs = [(11.0, 0.5), (12.5, 0.0), (9.0, 1.0)];
        let dt = 0.001;
        let integral: f64 = (0..30_000)
            .map(|i| quench_density(&objs, i as f64 * dt, 0.1) * dt)
            .sum();
        assert!((integral - 1.0).abs() < 1e-6, "{integral}");
        let one = [(10.0, 0.5)];
        assert!(quench_density(&one, 10.0, 0.1) > quench_density(&one, 10.2, 0.1));
        let peak = 1.0 / (0.1 * (2.0 * std::f64::consts::PI).sqrt());
        assert!((quench_density(&[(5.0, 0.0)], 5.0, 0.1) - peak).abs() < 1e-12);
        assert_eq!(quench_density(&[], 5.0, 0.1), 0.0);
    }

    #[test]
    fn disruption_model_in_words() {
        let mut o = OrbitOptions::default();
        assert_eq!(
            survival_words(Survival::Physical, &o),
            "survival: disc tide (disc_tide_ratio = 1.1, disc_tide_loss_power = 1)"
        );
        o.disc_tide_loss_power = 0.0;
        o.disc_tide_ratio = 0.8;
        assert_eq!(
            survival_words(Survival::Pericentre, &o),
            "survival: disc tide (disc_tide_ratio = 0.8) + 20 kpc pericentre cut"
        );
        o.disc_tide_loss_power = 0.3;
        o.disc_tide_ratio = 50.0;
        assert_eq!(
            survival_words(Survival::Physical, &o),
            "survival: disc tide (disc_tide_ratio = 50, disc_tide_loss_power = 0.3)"
        );
        o.disc_tide_ratio = 0.0;
        assert_eq!(
            survival_words(Survival::Pericentre, &o),
            "survival: 20 kpc pericentre cut"
        );
        assert!(survival_words(Survival::Physical, &o).contains("no disc model"));
    }

    #[test]
    fn listing_names_each_figure_once() {
        let files: Vec<PathBuf> = ["a.png", "a.svg", "b.png", "b.svg"]
            .iter()
            .map(PathBuf::from)
            .collect();
        assert_eq!(listing(&files), "a, b (each as .png and .svg)");
    }
}
