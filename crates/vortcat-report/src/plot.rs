//! The report's figures, drawn with `plotters` into SVG strings. Colour maps are rasters
//! embedded in the SVG as PNG (plotters' bitmap element), axes and labels are SVG text.
//! Signed fields use a diverging map (colorous `RED_BLUE`, red = positive), magnitudes the
//! perceptually uniform `VIRIDIS`.

use plotters::coord::Shift;
use plotters::element::BitMapElement;
use plotters::prelude::*;

pub use plotters::style::RGBColor;

/// Drawing errors as text (the caller adds the file name).
pub type PlotResult<T> = Result<T, String>;

fn err(e: impl std::fmt::Display) -> String {
    e.to_string()
}

/// A tick label with about three significant digits and no float noise.
pub fn tick(v: f64) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if (1e-2..1e4).contains(&a) {
        let digits = (2 - a.log10().floor() as i32).clamp(0, 4) as usize;
        let s = format!("{v:.digits$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        let s = format!("{v:.2e}");
        // 1.50e-3 -> 1.5e-3
        match s.split_once('e') {
            Some((m, e)) => {
                let m = if m.contains('.') {
                    m.trim_end_matches('0').trim_end_matches('.')
                } else {
                    m
                };
                format!("{m}e{e}")
            }
            None => s,
        }
    }
}

/// A colour map for values.
#[derive(Debug, Clone, Copy)]
pub enum ColourScale {
    /// Diverging, symmetric about zero: `[-limit, limit]`, red positive, blue negative.
    Diverging {
        /// Largest magnitude shown (values beyond are clipped).
        limit: f64,
    },
    /// Sequential viridis from `min` to `max`.
    Sequential {
        /// Value at the dark end.
        min: f64,
        /// Value at the bright end.
        max: f64,
    },
}

impl ColourScale {
    /// The range shown.
    pub fn range(self) -> (f64, f64) {
        match self {
            ColourScale::Diverging { limit } => (-limit, limit),
            ColourScale::Sequential { min, max } => (min, max),
        }
    }

    /// Colour of a finite value.
    pub fn colour(self, v: f64) -> [u8; 3] {
        let c = match self {
            ColourScale::Diverging { limit } => {
                let t = 0.5 - 0.5 * (v / limit).clamp(-1.0, 1.0);
                colorous::RED_BLUE.eval_continuous(t)
            }
            ColourScale::Sequential { min, max } => {
                let t = ((v - min) / (max - min)).clamp(0.0, 1.0);
                colorous::VIRIDIS.eval_continuous(if t.is_finite() { t } else { 0.0 })
            }
        };
        [c.r, c.g, c.b]
    }

    /// Whether markers should be dark (on the light diverging map) or light (on viridis).
    pub fn marker_colour(self) -> RGBColor {
        match self {
            ColourScale::Diverging { .. } => RGBColor(20, 20, 20),
            ColourScale::Sequential { .. } => RGBColor(255, 255, 255),
        }
    }
}

/// Colour of invalid (masked or NaN) vectors on maps.
pub const INVALID: [u8; 3] = [90, 90, 90];
/// Colour of points where the field could not be computed (but the vector is valid).
pub const NOT_COMPUTED: [u8; 3] = [200, 200, 200];
/// Colour of flagged fits in markers and scatter plots.
pub const FLAGGED: RGBColor = RGBColor(214, 0, 143);
/// Colour of clean fits in scatter plots and histograms.
pub const CLEAN: RGBColor = RGBColor(33, 102, 172);
/// Colour of the fitted model curve.
pub const MODEL: RGBColor = RGBColor(230, 85, 13);

/// What a map cell shows.
#[derive(Debug, Clone, Copy)]
pub enum Cell {
    /// A value.
    Value(f64),
    /// The vector is invalid.
    Invalid,
    /// The value could not be computed.
    NotComputed,
    /// Outside the region shown (drawn white).
    Outside,
}

/// A circle marker on a map, in data coordinates.
#[derive(Debug, Clone)]
pub struct Marker {
    /// Centre.
    pub centre: (f64, f64),
    /// Radius in data units (a minimum pixel size applies).
    pub radius: f64,
    /// Text beside the circle.
    pub label: String,
    /// Draw in the flagged colour.
    pub flagged: bool,
    /// Draw a thin dashed-looking ring instead of a bold one (e.g. the fitting window).
    pub thin: bool,
}

/// A map: a raster over a rectangle with a colour bar and circle markers.
pub struct MapSpec<'a> {
    /// `(x_min, x_max, y_min, y_max)` in data units.
    pub extent: (f64, f64, f64, f64),
    /// The value at a point (nearest grid node).
    pub cell: &'a dyn Fn(f64, f64) -> Cell,
    /// The colour scale.
    pub scale: ColourScale,
    /// Label of the colour bar (with unit).
    pub bar_label: String,
    /// Axis labels (with units).
    pub x_label: String,
    /// Axis labels (with units).
    pub y_label: String,
    /// Markers.
    pub markers: Vec<Marker>,
    /// Crosses (fitted centres) and dots (detected centres).
    pub crosses: Vec<(f64, f64)>,
    /// Dots.
    pub dots: Vec<(f64, f64)>,
    /// Largest width of the whole figure in pixels.
    pub max_width: u32,
    /// Largest height of the plotting area in pixels.
    pub max_height: u32,
}

const BAR_WIDTH: u32 = 130;
const Y_AREA: u32 = 70;
const X_AREA: u32 = 45;
const MARGIN: u32 = 12;

/// The figure size `(width, height)` for a map of the given spec.
pub fn map_size(spec: &MapSpec<'_>) -> (u32, u32) {
    let (x0, x1, y0, y1) = spec.extent;
    let aspect = ((y1 - y0) / (x1 - x0)).abs().clamp(0.05, 20.0);
    let mut pw = (spec.max_width - BAR_WIDTH - Y_AREA - 2 * MARGIN) as f64;
    let mut ph = pw * aspect;
    if ph > spec.max_height as f64 {
        ph = spec.max_height as f64;
        pw = ph / aspect;
    }
    let ph = ph.max(120.0);
    (
        pw.round() as u32 + BAR_WIDTH + Y_AREA + 2 * MARGIN,
        ph.round() as u32 + X_AREA + 2 * MARGIN,
    )
}

/// Draws a map as SVG.
pub fn map_svg(spec: &MapSpec<'_>) -> PlotResult<(String, (u32, u32))> {
    let size = map_size(spec);
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let (left, right) = root.split_horizontally(size.0 - BAR_WIDTH);
        draw_map(&left, spec)?;
        draw_bar(&right, spec)?;
        root.present().map_err(err)?;
    }
    // plotters-svg writes `data:png;base64,`, which is not a MIME type; browsers need
    // `image/png` to decode the embedded raster reliably.
    Ok((
        buf.replace("data:png;base64,", "data:image/png;base64,"),
        size,
    ))
}

fn draw_map(area: &DrawingArea<SVGBackend<'_>, Shift>, spec: &MapSpec<'_>) -> PlotResult<()> {
    let (x0, x1, y0, y1) = spec.extent;
    let mut chart = ChartBuilder::on(area)
        .margin(MARGIN)
        .x_label_area_size(X_AREA)
        .y_label_area_size(Y_AREA)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    let (pw, ph) = chart.plotting_area().dim_in_pixel();
    let mut pixels = Vec::with_capacity((pw * ph * 3) as usize);
    for j in 0..ph {
        let y = y1 - (j as f64 + 0.5) / ph as f64 * (y1 - y0);
        for i in 0..pw {
            let x = x0 + (i as f64 + 0.5) / pw as f64 * (x1 - x0);
            let rgb = match (spec.cell)(x, y) {
                Cell::Value(v) if v.is_finite() => spec.scale.colour(v),
                Cell::Value(_) | Cell::NotComputed => NOT_COMPUTED,
                Cell::Invalid => INVALID,
                Cell::Outside => [255, 255, 255],
            };
            pixels.extend_from_slice(&rgb);
        }
    }
    let bitmap = BitMapElement::with_owned_buffer((x0, y1), (pw, ph), pixels)
        .ok_or("raster size mismatch")?;
    chart.draw_series(std::iter::once(bitmap)).map_err(err)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_desc(spec.x_label.as_str())
        .y_desc(spec.y_label.as_str())
        .x_labels(6)
        .y_labels(6)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", 15))
        .axis_desc_style(("sans-serif", 16))
        .draw()
        .map_err(err)?;
    let px_per_unit = pw as f64 / (x1 - x0);
    let base = spec.scale.marker_colour();
    for m in &spec.markers {
        let colour = if m.flagged { FLAGGED } else { base };
        let r_px = (m.radius * px_per_unit).max(3.0);
        let style = ShapeStyle {
            color: colour.to_rgba(),
            filled: false,
            stroke_width: if m.thin { 1 } else { 2 },
        };
        chart
            .draw_series(std::iter::once(Circle::new(
                m.centre,
                r_px.round() as i32,
                style,
            )))
            .map_err(err)?;
        if !m.label.is_empty() {
            let offset = (r_px * 0.72).round() as i32 + 2;
            let text = EmptyElement::at(m.centre)
                + Text::new(
                    m.label.clone(),
                    (offset, -offset - 14),
                    ("sans-serif", 14).into_font().color(&colour),
                );
            chart.draw_series(std::iter::once(text)).map_err(err)?;
        }
    }
    chart
        .draw_series(
            spec.crosses
                .iter()
                .map(|&p| Cross::new(p, 4, base.stroke_width(2))),
        )
        .map_err(err)?;
    chart
        .draw_series(spec.dots.iter().map(|&p| Circle::new(p, 2, base.filled())))
        .map_err(err)?;
    Ok(())
}

fn draw_bar(area: &DrawingArea<SVGBackend<'_>, Shift>, spec: &MapSpec<'_>) -> PlotResult<()> {
    let (lo, hi) = spec.scale.range();
    let mut chart = ChartBuilder::on(area)
        .margin_top(MARGIN)
        .margin_bottom(MARGIN + X_AREA)
        .margin_left(14)
        .margin_right(22)
        .y_label_area_size(78)
        .build_cartesian_2d(0.0..1.0, lo..hi)
        .map_err(err)?;
    let (pw, ph) = chart.plotting_area().dim_in_pixel();
    let mut pixels = Vec::with_capacity((pw * ph * 3) as usize);
    for j in 0..ph {
        let v = hi - (j as f64 + 0.5) / ph as f64 * (hi - lo);
        let rgb = spec.scale.colour(v);
        for _ in 0..pw {
            pixels.extend_from_slice(&rgb);
        }
    }
    let bitmap = BitMapElement::with_owned_buffer((0.0, hi), (pw, ph), pixels)
        .ok_or("colour bar size mismatch")?;
    chart.draw_series(std::iter::once(bitmap)).map_err(err)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .disable_x_axis()
        .y_desc(spec.bar_label.as_str())
        .y_labels(6)
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 15))
        .draw()
        .map_err(err)?;
    Ok(())
}

/// A binned profile: bin centre, mean, standard deviation, count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BinPoint {
    /// Bin centre.
    pub x: f64,
    /// Mean of the samples.
    pub mean: f64,
    /// Standard deviation of the samples (0 for a single sample).
    pub std: f64,
    /// Samples in the bin.
    pub n: usize,
}

/// A model curve.
#[derive(Debug, Clone)]
pub struct Curve {
    /// Legend text.
    pub name: String,
    /// Points.
    pub points: Vec<(f64, f64)>,
    /// Colour.
    pub colour: RGBColor,
    /// Dashed.
    pub dashed: bool,
}

/// A profile plot: binned data with error bars, model curves and vertical reference lines.
pub struct ProfileSpec<'a> {
    /// Binned data.
    pub bins: &'a [BinPoint],
    /// Curves.
    pub curves: &'a [Curve],
    /// Vertical lines `(x, legend)`.
    pub vlines: &'a [(f64, String)],
    /// Axis label (with unit).
    pub x_label: String,
    /// Axis label (with unit).
    pub y_label: String,
    /// Right end of the x range.
    pub x_max: f64,
    /// Figure size.
    pub size: (u32, u32),
}

/// Draws a profile as SVG.
pub fn profile_svg(spec: &ProfileSpec<'_>) -> PlotResult<String> {
    let mut lo = 0.0f64;
    let mut hi = 0.0f64;
    for b in spec.bins {
        lo = lo.min(b.mean - b.std);
        hi = hi.max(b.mean + b.std);
    }
    for c in spec.curves {
        for &(_, y) in &c.points {
            if y.is_finite() {
                lo = lo.min(y);
                hi = hi.max(y);
            }
        }
    }
    if hi - lo <= 0.0 || !(hi - lo).is_finite() {
        hi = lo + 1.0;
    }
    let pad = 0.08 * (hi - lo);
    let (lo, hi) = (lo - pad, hi + pad);
    let x_max = if spec.x_max > 0.0 { spec.x_max } else { 1.0 };
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, spec.size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .margin(MARGIN)
            .x_label_area_size(X_AREA)
            .y_label_area_size(Y_AREA)
            .build_cartesian_2d(0.0..x_max, lo..hi)
            .map_err(err)?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .x_desc(spec.x_label.as_str())
            .y_desc(spec.y_label.as_str())
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(("sans-serif", 15))
            .axis_desc_style(("sans-serif", 16))
            .draw()
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(0.0, 0.0), (x_max, 0.0)],
                BLACK.mix(0.5),
            )))
            .map_err(err)?;
        for (x, name) in spec.vlines {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(*x, lo), (*x, hi)],
                    6,
                    4,
                    BLACK.mix(0.6).stroke_width(1),
                ))
                .map_err(err)?
                .label(name.as_str())
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK.mix(0.6)));
        }
        for c in spec.curves {
            let colour = c.colour;
            let style = colour.stroke_width(2);
            let series = if c.dashed {
                chart.draw_series(DashedLineSeries::new(c.points.clone(), 8, 5, style))
            } else {
                chart.draw_series(LineSeries::new(c.points.clone(), style))
            };
            series
                .map_err(err)?
                .label(c.name.as_str())
                .legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2))
                });
        }
        let data = RGBColor(40, 40, 40);
        chart
            .draw_series(spec.bins.iter().map(|b| {
                ErrorBar::new_vertical(b.x, b.mean - b.std, b.mean, b.mean + b.std, data, 6)
            }))
            .map_err(err)?
            .label("data: bin mean ± 1 s.d.")
            .legend(move |(x, y)| Circle::new((x + 10, y), 3, data.filled()));
        chart
            .draw_series(
                spec.bins
                    .iter()
                    .map(|b| Circle::new((b.x, b.mean), 3, data.filled())),
            )
            .map_err(err)?;
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(180, 180, 180))
            .label_font(("sans-serif", 15))
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(buf)
}

/// A histogram of all values with the clean subset drawn over it.
pub fn histogram_svg(
    all: &[f64],
    clean: &[f64],
    x_label: &str,
    size: (u32, u32),
) -> PlotResult<String> {
    let finite: Vec<f64> = all.iter().copied().filter(|v| v.is_finite()).collect();
    let (mut lo, mut hi) = finite
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        lo = 0.0;
        hi = 1.0;
    }
    if hi - lo <= 0.0 {
        let d = if lo.abs() > 0.0 { 0.05 * lo.abs() } else { 1.0 };
        lo -= d;
        hi += d;
    }
    let nbins = ((finite.len() as f64).sqrt().ceil() as usize).clamp(5, 40);
    let width = (hi - lo) / nbins as f64;
    let count = |vals: &[f64]| {
        let mut c = vec![0usize; nbins];
        for &v in vals.iter().filter(|v| v.is_finite()) {
            let k = (((v - lo) / width) as usize).min(nbins - 1);
            c[k] += 1;
        }
        c
    };
    let call = count(&finite);
    let cclean = count(clean);
    let top = call.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.1;
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .margin(MARGIN)
            .x_label_area_size(X_AREA)
            .y_label_area_size(55)
            .build_cartesian_2d(lo..hi, 0.0..top)
            .map_err(err)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .light_line_style(RGBColor(240, 240, 240))
            .x_desc(x_label)
            .y_desc("fits per bin")
            .x_labels(6)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(err)?;
        let bars = |counts: &[usize], colour: RGBColor| {
            counts
                .iter()
                .enumerate()
                .map(|(k, &n)| {
                    let a = lo + k as f64 * width;
                    Rectangle::new([(a, 0.0), (a + width, n as f64)], colour.filled())
                })
                .collect::<Vec<_>>()
        };
        chart
            .draw_series(bars(&call, RGBColor(190, 190, 190)))
            .map_err(err)?
            .label("all fits")
            .legend(|(x, y)| {
                Rectangle::new(
                    [(x, y - 5), (x + 14, y + 5)],
                    RGBColor(190, 190, 190).filled(),
                )
            });
        chart
            .draw_series(bars(&cclean, CLEAN))
            .map_err(err)?
            .label("clean fits (no flag)")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 14, y + 5)], CLEAN.filled()));
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(180, 180, 180))
            .label_font(("sans-serif", 14))
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(buf)
}

/// A log–log scatter plot of clean and flagged points: log10 of the values on linear axes,
/// labelled with the values themselves (so that a range of less than a decade still gets
/// ticks). Points with a non-positive coordinate are left out.
pub fn scatter_svg(
    clean: &[(f64, f64)],
    flagged: &[(f64, f64)],
    x_label: &str,
    y_label: &str,
    size: (u32, u32),
) -> PlotResult<String> {
    let logs = |v: &[(f64, f64)]| -> Vec<(f64, f64)> {
        v.iter()
            .filter(|(x, y)| *x > 0.0 && *y > 0.0 && x.is_finite() && y.is_finite())
            .map(|(x, y)| (x.log10(), y.log10()))
            .collect()
    };
    let (lc, lf) = (logs(clean), logs(flagged));
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for &(x, y) in lc.iter().chain(&lf) {
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    if !x0.is_finite() {
        (x0, x1, y0, y1) = (-1.0, 0.0, -1.0, 0.0);
    }
    let pad = |a: f64, b: f64| {
        let d = ((b - a) * 0.08).max(0.02);
        (a - d, b + d)
    };
    let ((x0, x1), (y0, y1)) = (pad(x0, x1), pad(y0, y1));
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .margin(MARGIN)
            .x_label_area_size(X_AREA)
            .y_label_area_size(Y_AREA)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(err)?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(240, 240, 240))
            .bold_line_style(RGBColor(220, 220, 220))
            .x_desc(format!("{x_label}, logarithmic"))
            .y_desc(format!("{y_label}, logarithmic"))
            .x_labels(6)
            .y_labels(6)
            .x_label_formatter(&|v| tick(10f64.powf(*v)))
            .y_label_formatter(&|v| tick(10f64.powf(*v)))
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .draw()
            .map_err(err)?;
        chart
            .draw_series(
                lc.iter()
                    .map(|&p| Circle::new(p, 3, CLEAN.mix(0.6).filled())),
            )
            .map_err(err)?
            .label("clean")
            .legend(|(x, y)| Circle::new((x + 8, y), 3, CLEAN.filled()));
        chart
            .draw_series(
                lf.iter()
                    .map(|&p| Cross::new(p, 4, FLAGGED.stroke_width(2))),
            )
            .map_err(err)?
            .label("flagged")
            .legend(|(x, y)| Cross::new((x + 8, y), 4, FLAGGED.stroke_width(2)));
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(180, 180, 180))
            .label_font(("sans-serif", 14))
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(buf)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_short() {
        assert_eq!(tick(0.0012000000000000001), "1.2e-3");
        assert_eq!(tick(0.5), "0.5");
        assert_eq!(tick(12.0), "12");
        assert_eq!(tick(-0.25), "-0.25");
        assert_eq!(tick(0.0), "0");
    }

    #[test]
    fn diverging_scale_is_red_for_positive_and_blue_for_negative() {
        let s = ColourScale::Diverging { limit: 1.0 };
        let [r, _, b] = s.colour(1.0);
        assert!(r > b);
        let [r, _, b] = s.colour(-1.0);
        assert!(b > r);
    }

    #[test]
    fn map_embeds_one_raster_per_panel_and_escapes_labels() {
        let cell = |x: f64, _y: f64| Cell::Value(x);
        let spec = MapSpec {
            extent: (0.0, 1.0, 0.0, 0.5),
            cell: &cell,
            scale: ColourScale::Diverging { limit: 1.0 },
            bar_label: "ω (<b>)".into(),
            x_label: "x (m)".into(),
            y_label: "y (m)".into(),
            markers: vec![],
            crosses: vec![(0.5, 0.25)],
            dots: vec![],
            max_width: 600,
            max_height: 400,
        };
        let (svg, (w, h)) = map_svg(&spec).unwrap();
        assert!(w <= 600 && h > 100);
        assert_eq!(
            svg.matches("data:image/png;base64").count(),
            2,
            "map and bar"
        );
        assert!(!svg.contains("<b>") && svg.contains("&lt;b&gt;"));
    }
}
