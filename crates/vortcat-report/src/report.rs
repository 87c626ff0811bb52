//! Builds `DIR/report/index.html` and its figures in `DIR/report/img/`.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use rand::seq::index::sample;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde_json::json;

use crate::error::ReportError;
use crate::field::{self, FittedModel, MapField, Neighbourhood};
use crate::html::{esc, script_json, SCRIPT, STYLE};
use crate::plot::{self, ColourScale, Curve, MapSpec, Marker, ProfileSpec};
use crate::select::{self, Reason, SnapshotKey};
use crate::stats::{self, Quantity};
use crate::survey::{Survey, Vortex};

/// Choices of the report. The defaults keep a report of any survey size small.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportOptions {
    /// Detail cards for at most this many flagged fits (most doubtful first).
    pub max_flagged: usize,
    /// Detail cards for the strongest fits by |Γ|.
    pub top: usize,
    /// Detail cards for a random sample of the remaining fits.
    pub sample: usize,
    /// Seed of the random sample.
    pub seed: u64,
    /// Snapshot maps at most.
    pub max_maps: usize,
    /// What the maps show.
    pub map_field: MapField,
    /// Kinematic viscosity ν, overriding the survey's `fluid.viscosity`.
    pub viscosity: Option<f64>,
    /// Kolmogorov length η (same length unit as the grid), overriding the config's.
    pub kolmogorov_length: Option<f64>,
    /// Points drawn in a scatter plot at most (a seeded sample beyond).
    pub max_scatter: usize,
}

impl Default for ReportOptions {
    fn default() -> Self {
        Self {
            max_flagged: 200,
            top: 20,
            sample: 20,
            seed: 1,
            max_maps: 24,
            map_field: MapField::Criterion,
            viscosity: None,
            kolmogorov_length: None,
            max_scatter: 4000,
        }
    }
}

/// What was written.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportSummary {
    /// The page.
    pub index: PathBuf,
    /// Bytes of the page and its figures together.
    pub bytes: u64,
    /// Vortices in the catalog.
    pub vortices: usize,
    /// Detail cards.
    pub detailed: usize,
    /// Snapshot maps drawn.
    pub maps: usize,
    /// Snapshots or figures that could not be drawn (one line each).
    pub problems: Vec<String>,
}

/// Short meanings of the flags (docs/flags.md has the rules).
pub fn flag_meaning(flag: &str) -> &'static str {
    match flag {
        "core_under_resolved" => "core radius below the set number of grid spacings",
        "window_clipped_by_edge" => "fitting window reaches outside the domain",
        "window_invalid_vectors" => "too many invalid vectors in the fitting window",
        "not_converged" => "solver stopped before a least-squares minimum",
        "parameter_at_bound" => "a parameter ended at a bound",
        "centre_moved" => "fitted centre far from the detected centre",
        "low_r_squared" => "model explains little of the velocity (low R²)",
        "neighbour_in_window" => "another detected vortex inside the window",
        "large_uncertainty" => "relative standard error of Γ or rc too large",
        "singular_covariance" => "parameters not determined by the data",
        "split_region" => "detected region was split from a larger one",
        "sense_undetermined" => "rotation sense could not be decided",
        "not_fitted" => "too few vectors to fit",
        _ => "",
    }
}

struct Ctx<'a> {
    survey: &'a Survey,
    opts: &'a ReportOptions,
    img: PathBuf,
    problems: Vec<String>,
    length: String,
    velocity: String,
}

impl Ctx<'_> {
    fn write_img(&mut self, name: &str, svg: Result<String, String>) -> Option<String> {
        let path = self.img.join(name);
        match svg {
            Ok(text) => match std::fs::write(&path, text) {
                Ok(()) => Some(format!("img/{name}")),
                Err(e) => {
                    self.problems
                        .push(format!("{}: cannot write: {e}", path.display()));
                    None
                }
            },
            Err(e) => {
                self.problems
                    .push(format!("{}: cannot draw the plot: {e}", path.display()));
                None
            }
        }
    }
}

fn num(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => plot::tick(v),
        _ => "–".into(),
    }
}

fn num_err(x: Option<f64>, e: Option<f64>) -> String {
    match (x, e) {
        (Some(v), Some(e)) if v.is_finite() && e.is_finite() => {
            format!("{} ± {}", plot::tick(v), plot::tick(e))
        }
        _ => num(x),
    }
}

fn unit_suffix(u: &str) -> String {
    if u.is_empty() {
        String::new()
    } else {
        format!(" ({u})")
    }
}

/// Six significant digits: enough for a table, and a third of the bytes of a full float.
fn round6(x: Option<f64>) -> serde_json::Value {
    match x {
        Some(v) if v.is_finite() => format!("{v:.5e}")
            .parse::<f64>()
            .map_or(serde_json::Value::Null, |r| json!(r)),
        _ => serde_json::Value::Null,
    }
}

fn figure(src: &str, alt: &str, caption: &str, size: Option<(u32, u32)>) -> String {
    let dims = size.map_or(String::new(), |(w, h)| {
        format!(" width=\"{w}\" height=\"{h}\"")
    });
    format!(
        "<figure><img src=\"{}\" alt=\"{}\" loading=\"lazy\"{dims}><figcaption>{}</figcaption></figure>\n",
        esc(src),
        esc(alt),
        caption
    )
}

/// Writes the report of the survey in `dir` into `dir/report/`.
pub fn write_report(dir: &Path, opts: &ReportOptions) -> Result<ReportSummary, ReportError> {
    let survey = Survey::open(dir)?;
    write_report_for(&survey, opts, &dir.join("report"))
}

/// Writes the report of `survey` into folder `out` (created; its `img/` is replaced).
pub fn write_report_for(
    survey: &Survey,
    opts: &ReportOptions,
    out: &Path,
) -> Result<ReportSummary, ReportError> {
    let img = out.join("img");
    if img.exists() {
        std::fs::remove_dir_all(&img).map_err(|source| ReportError::Write {
            path: img.clone(),
            source,
        })?;
    }
    std::fs::create_dir_all(&img).map_err(|source| ReportError::Write {
        path: img.clone(),
        source,
    })?;
    let mut ctx = Ctx {
        survey,
        opts,
        img,
        problems: Vec::new(),
        length: survey.units.length().to_string(),
        velocity: survey.units.velocity().to_string(),
    };
    let vortices = &survey.vortices;
    let detail = select::detail(vortices, opts.max_flagged, opts.top, opts.sample, opts.seed);
    let done: Vec<SnapshotKey> = {
        let mut s: Vec<SnapshotKey> = survey
            .run
            .snapshots
            .iter()
            .filter(|s| s.status == "done")
            .filter_map(|s| select::parse_snapshot(&s.snapshot))
            .collect();
        if s.is_empty() {
            s = vortices.iter().map(|v| (v.file.clone(), v.index)).collect();
            s.dedup();
        }
        s
    };
    let maps = select::maps(vortices, &done, opts.max_maps);
    let map_set: BTreeMap<&SnapshotKey, usize> =
        maps.iter().enumerate().map(|(i, k)| (k, i)).collect();

    // Snapshots needed: those with a map and those holding a detailed vortex; read once each.
    let mut needed: BTreeMap<SnapshotKey, Vec<usize>> = BTreeMap::new();
    for k in &maps {
        needed.entry(k.clone()).or_default();
    }
    for &(i, _) in &detail {
        let v = &vortices[i];
        needed.entry((v.file.clone(), v.index)).or_default().push(i);
    }
    let mut by_snapshot: BTreeMap<SnapshotKey, Vec<usize>> = BTreeMap::new();
    for (i, v) in vortices.iter().enumerate() {
        if needed.contains_key(&(v.file.clone(), v.index)) {
            by_snapshot
                .entry((v.file.clone(), v.index))
                .or_default()
                .push(i);
        }
    }
    let mut map_html: Vec<String> = vec![String::new(); maps.len()];
    let mut card_figs: BTreeMap<usize, String> = BTreeMap::new();
    let mut card_notes: BTreeMap<usize, String> = BTreeMap::new();
    let mut card_rms: BTreeMap<usize, f64> = BTreeMap::new();
    for (key, detailed) in &needed {
        let plane = field::read_plane(&key.0, key.1, &survey.config.input);
        let plane = match plane {
            Ok(p) => p,
            Err(e) => {
                let line = format!("{}#{}: not re-read: {e}", key.0, key.1);
                if let Some(&m) = map_set.get(key) {
                    map_html[m] = format!(
                        "<div class=\"snap\"><h3>{}</h3><p class=\"note\">{}</p></div>\n",
                        esc(&format!("{}#{}", key.0, key.1)),
                        esc(&line)
                    );
                }
                for &i in detailed {
                    card_notes.insert(i, line.clone());
                }
                ctx.problems.push(line);
                continue;
            }
        };
        if let Some(&m) = map_set.get(key) {
            let rows = by_snapshot.get(key).map_or(&[][..], Vec::as_slice);
            map_html[m] = snapshot_map(&mut ctx, m, key, &plane, rows);
        }
        for &i in detailed {
            let v = &vortices[i];
            let model = FittedModel::from_vortex(v);
            match field::neighbourhood(&plane, v, model.as_ref()) {
                Some(nb) => {
                    card_rms.insert(i, nb.residual_rms);
                    card_figs.insert(i, vortex_figures(&mut ctx, i, v, model.as_ref(), &nb));
                }
                None => {
                    card_notes.insert(i, "no centre to draw the profiles round".into());
                }
            }
        }
    }

    let mut page = String::with_capacity(1 << 20);
    head(&mut page, survey);
    overview(&mut page, survey, &detail, maps.len());
    flags_section(&mut page, survey);
    page.push_str("<section id=\"snapshots\"><h2>Snapshots</h2>\n");
    let _ = writeln!(
        page,
        "<p class=\"note\">{} of {} snapshots are drawn: those with the most flagged fits, then evenly spaced others. {}</p>",
        maps.len(),
        done.len(),
        map_legend(survey, opts.map_field)
    );
    for h in &map_html {
        page.push_str(h);
    }
    page.push_str("</section>\n");
    vortex_cards(&mut page, &ctx, &detail, &card_figs, &card_notes, &card_rms);
    population(&mut page, &mut ctx);
    table_section(&mut page, survey, &detail);
    if !ctx.problems.is_empty() {
        page.push_str("<section id=\"problems\"><h2>Not drawn</h2><ul>\n");
        for p in ctx.problems.iter().take(500) {
            let _ = writeln!(page, "<li>{}</li>", esc(p));
        }
        if ctx.problems.len() > 500 {
            let _ = writeln!(page, "<li>… and {} more</li>", ctx.problems.len() - 500);
        }
        page.push_str("</ul></section>\n");
    }
    let _ = write!(
        page,
        "</main>\n<script>{SCRIPT}</script>\n</body>\n</html>\n"
    );
    let index = out.join("index.html");
    std::fs::write(&index, &page).map_err(|source| ReportError::Write {
        path: index.clone(),
        source,
    })?;
    let mut bytes = page.len() as u64;
    if let Ok(entries) = std::fs::read_dir(&ctx.img) {
        for e in entries.flatten() {
            bytes += e.metadata().map_or(0, |m| m.len());
        }
    }
    Ok(ReportSummary {
        index,
        bytes,
        vortices: vortices.len(),
        detailed: detail.len(),
        maps: maps.len(),
        problems: ctx.problems,
    })
}

fn head(page: &mut String, survey: &Survey) {
    let name = survey.dir.display().to_string();
    let _ = write!(
        page,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; img-src 'self' data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'\">\n\
<title>vortcat report: {}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n\
<header><h1>Vortex survey: quality-control report</h1><div class=\"sub\">{} · vortcat {}</div></header>\n\
<nav><a href=\"#overview\">Overview</a><a href=\"#flags\">Flags</a><a href=\"#snapshots\">Snapshots</a>\
<a href=\"#vortices\">Vortices</a><a href=\"#population\">Population</a><a href=\"#table\">All fits</a></nav>\n<main>\n",
        esc(&name),
        esc(&name),
        esc(&survey.run.version)
    );
}

fn stat_card(page: &mut String, k: &str, v: &str, bad: bool) {
    let _ = write!(
        page,
        "<div class=\"stat{}\"><div class=\"v\">{}</div><div class=\"k\">{}</div></div>",
        if bad { " bad" } else { "" },
        esc(v),
        esc(k)
    );
}

fn overview(page: &mut String, survey: &Survey, detail: &[(usize, Reason)], n_maps: usize) {
    let v = &survey.vortices;
    let flagged = v.iter().filter(|v| !v.is_clean()).count();
    let run = &survey.run;
    let snaps = run.snapshots.len();
    let failed = run.snapshots.iter().filter(|s| s.status != "done").count();
    page.push_str("<section id=\"overview\"><h2>Overview</h2>\n<div class=\"cards\">");
    stat_card(page, "snapshots", &snaps.to_string(), false);
    stat_card(page, "snapshots failed", &failed.to_string(), failed > 0);
    stat_card(page, "vortices", &v.len().to_string(), false);
    stat_card(page, "flagged fits", &flagged.to_string(), flagged > 0);
    stat_card(page, "clean fits", &(v.len() - flagged).to_string(), false);
    stat_card(page, "detail cards", &detail.len().to_string(), false);
    stat_card(page, "snapshot maps", &n_maps.to_string(), false);
    page.push_str("</div>\n");
    let mut models: BTreeMap<&str, usize> = BTreeMap::new();
    for r in v {
        *models
            .entry(if r.model.is_empty() {
                "(not fitted)"
            } else {
                &r.model
            })
            .or_default() += 1;
    }
    page.push_str("<table class=\"kv\"><tbody>\n");
    let mut kv = |k: &str, val: &str| {
        let _ = writeln!(page, "<tr><th>{}</th><td>{}</td></tr>", esc(k), esc(val));
    };
    kv("survey folder", &survey.dir.display().to_string());
    kv("vortcat version", &run.version);
    kv("git commit", &run.git_commit);
    kv(
        "started – ended (UTC)",
        &format!("{} – {}", run.started, run.ended),
    );
    kv("threads", &run.threads.to_string());
    kv("command", &run.command.join(" "));
    kv("config SHA-256", &run.config_sha256);
    kv(
        "criterion · gradient",
        &format!(
            "{} · {}",
            survey.config.detection.criterion, survey.config.detection.gradient
        ),
    );
    kv("models fitted", &survey.config.fit.models.join(", "));
    kv(
        "models chosen",
        &models
            .iter()
            .map(|(m, n)| format!("{m}: {n}"))
            .collect::<Vec<_>>()
            .join(", "),
    );
    kv(
        "viscosity ν",
        &survey
            .config
            .fluid
            .viscosity
            .map_or("not given".into(), |n| format!("{n:e}")),
    );
    kv(
        "units",
        &format!(
            "length {}, velocity {}",
            survey.units.length(),
            survey.units.velocity()
        ),
    );
    page.push_str("</tbody></table>\n");
    let _ = writeln!(
        page,
        "<details><summary>Resolved config (config.toml)</summary><pre>{}</pre></details>",
        esc(&survey.config_text)
    );
    let inputs = &run.inputs;
    let _ = writeln!(
        page,
        "<details><summary>Inputs ({} files)</summary><div class=\"wrap\"><table class=\"sortable\"><thead><tr><th>path</th><th>bytes</th><th>snapshots</th><th>BLAKE3 (first 16 hex digits)</th><th>error</th></tr></thead><tbody>",
        inputs.len()
    );
    for i in inputs.iter().take(1000) {
        let _ = writeln!(
            page,
            "<tr><td>{}</td><td class=\"num\" data-v=\"{}\">{}</td><td class=\"num\" data-v=\"{}\">{}</td><td><code>{}</code></td><td>{}</td></tr>",
            esc(&i.path),
            i.bytes,
            i.bytes,
            i.snapshots,
            i.snapshots,
            esc(i.blake3.get(..16).unwrap_or(&i.blake3)),
            esc(i.error.as_deref().unwrap_or(""))
        );
    }
    page.push_str("</tbody></table></div>");
    if inputs.len() > 1000 {
        let _ = write!(
            page,
            "<p class=\"note\">First 1000 of {} inputs; run.json lists all.</p>",
            inputs.len()
        );
    }
    page.push_str("</details>\n");
    let failures = survey.failures();
    if failures.is_empty() {
        page.push_str("<p><span class=\"chip ok\">no failed input or snapshot</span></p>\n");
    } else {
        let _ = writeln!(
            page,
            "<h3>Failures ({})</h3><div class=\"wrap\"><table><thead><tr><th>input or snapshot</th><th>error</th></tr></thead><tbody>",
            failures.len()
        );
        for (what, e) in failures.iter().take(1000) {
            let _ = writeln!(page, "<tr><td>{}</td><td>{}</td></tr>", esc(what), esc(e));
        }
        page.push_str("</tbody></table></div>\n");
    }
    page.push_str("</section>\n");
}

fn flags_section(page: &mut String, survey: &Survey) {
    let v = &survey.vortices;
    let counts = stats::flag_counts(v);
    page.push_str("<section id=\"flags\"><h2>Quality flags</h2>\n");
    if counts.is_empty() {
        page.push_str("<p>No fit carries a flag.</p></section>\n");
        return;
    }
    page.push_str("<table class=\"sortable\"><thead><tr><th>flag</th><th>fits</th><th>share of fits</th><th>meaning</th></tr></thead><tbody>\n");
    for (flag, n) in &counts {
        let share = 100.0 * *n as f64 / v.len().max(1) as f64;
        let _ = writeln!(
            page,
            "<tr><td><span class=\"chip flag\">{}</span></td><td class=\"num\" data-v=\"{n}\">{n}</td><td class=\"num\" data-v=\"{share}\">{share:.1} %</td><td>{}</td></tr>",
            esc(flag),
            esc(flag_meaning(flag))
        );
    }
    page.push_str("</tbody></table>\n<p class=\"note\">A fit can carry several flags. Rules and thresholds: docs/flags.md; the thresholds used are in the config above.</p></section>\n");
}

fn criterion_unit(name: &str, length: &str, velocity: &str) -> String {
    let rate = format!("({velocity})/({length})");
    match name {
        "vorticity" | "swirling-strength" => rate,
        "q" | "lambda2" => format!("{rate}²"),
        "delta" => format!("{rate}⁶"),
        _ => String::new(),
    }
}

fn map_legend(survey: &Survey, which: MapField) -> String {
    let c = match which {
        MapField::Vorticity => "vorticity ω_z (red counter-clockwise, blue clockwise)".to_string(),
        MapField::Criterion => format!(
            "the detection criterion {}",
            esc(&survey.config.detection.criterion)
        ),
    };
    format!(
        "Colour: {c}. Circles: fitted core radius rc round the fitted centre (×), labelled with the vortex number and sense (+ counter-clockwise, − clockwise); \
<span class=\"legend-sw\" style=\"background:#d6008f\"></span>flagged fit\
<span class=\"legend-sw\" style=\"background:#5a5a5a\"></span>invalid vector\
<span class=\"legend-sw\" style=\"background:#c8c8c8\"></span>criterion not computable. Dots: detected centroids."
    )
}

fn snapshot_map(
    ctx: &mut Ctx<'_>,
    m: usize,
    key: &SnapshotKey,
    plane: &vortcat_field::PlaneField,
    rows: &[usize],
) -> String {
    let survey = ctx.survey;
    let id = format!("{}#{}", key.0, key.1);
    let map = match field::plane_map(plane, &survey.config.detection, ctx.opts.map_field) {
        Ok(m) => m,
        Err(e) => {
            let line = format!("{id}: no map: {e}");
            ctx.problems.push(line.clone());
            return format!(
                "<div class=\"snap\"><h3>{}</h3><p class=\"note\">{}</p></div>\n",
                esc(&id),
                esc(&line)
            );
        }
    };
    let mut mags: Vec<f64> = map
        .values
        .iter()
        .filter(|v| v.is_finite())
        .map(|v| v.abs())
        .collect();
    mags.sort_by(f64::total_cmp);
    let p99 = stats::percentile(&mags, 99.5);
    let lim = if p99 > 0.0 && p99.is_finite() {
        p99
    } else {
        1.0
    };
    let scale = if map.signed {
        ColourScale::Diverging { limit: lim }
    } else {
        ColourScale::Sequential { min: 0.0, max: lim }
    };
    let g = plane.grid();
    let (xa, xb) = g.x().extent();
    let (ya, yb) = g.y().extent();
    let (hx, hy) = (0.5 * g.x().spacing().abs(), 0.5 * g.y().spacing().abs());
    let extent = (
        xa.min(xb) - hx,
        xa.max(xb) + hx,
        ya.min(yb) - hy,
        ya.max(yb) + hy,
    );
    let vs = &survey.vortices;
    let mut markers = Vec::new();
    let (mut crosses, mut dots) = (Vec::new(), Vec::new());
    for &i in rows {
        let v = &vs[i];
        let sense = match v.sense {
            1 => "+",
            -1 => "−",
            _ => "?",
        };
        if let (Some(x), Some(y)) = (v.x, v.y) {
            markers.push(Marker {
                centre: (x, y),
                radius: v.core_radius.unwrap_or(0.0),
                label: format!("{}{sense}", v.vortex),
                flagged: !v.is_clean(),
                thin: false,
            });
            crosses.push((x, y));
        }
        if let (Some(x), Some(y)) = (v.detect_x, v.detect_y) {
            dots.push((x, y));
            if v.x.is_none() {
                markers.push(Marker {
                    centre: (x, y),
                    radius: v.equivalent_radius.unwrap_or(0.0),
                    label: format!("{}{sense}", v.vortex),
                    flagged: true,
                    thin: true,
                });
            }
        }
    }
    let name = if map.signed {
        map.criterion.name().to_string()
    } else {
        match map.criterion.name() {
            "lambda2" => "−λ2 (clipped at 0)".to_string(),
            "vorticity" => "|ω|".to_string(),
            "swirling-strength" => "λci".to_string(),
            other => format!("{other} (clipped at 0)"),
        }
    };
    let name = if map.signed && map.criterion.name() == "vorticity" {
        "ω_z".to_string()
    } else {
        name
    };
    let unit = criterion_unit(map.criterion.name(), &ctx.length, &ctx.velocity);
    let cell = |x: f64, y: f64| field::map_cell(plane, &map, x, y);
    let spec = MapSpec {
        extent,
        cell: &cell,
        scale,
        bar_label: format!("{name}{}", unit_suffix(&unit)),
        x_label: format!("x ({})", ctx.length),
        y_label: format!("y ({})", ctx.length),
        markers,
        crosses,
        dots,
        max_width: 1100,
        max_height: 560,
    };
    let drawn = plot::map_svg(&spec);
    let size = drawn.as_ref().ok().map(|(_, s)| *s);
    let src = ctx.write_img(&format!("map{m:03}.svg"), drawn.map(|(s, _)| s));
    let flagged = rows.iter().filter(|&&i| !vs[i].is_clean()).count();
    let mut out = format!(
        "<div class=\"snap\" id=\"map{m}\"><h3>{}</h3><p class=\"note\">{} vortices, {} flagged{}</p>\n",
        esc(&id),
        rows.len(),
        flagged,
        vs.get(rows.first().copied().unwrap_or(usize::MAX))
            .and_then(|v| v.time)
            .map_or(String::new(), |t| format!(", t = {}", plot::tick(t)))
    );
    if let Some(src) = src {
        out.push_str(&figure(
            &src,
            &format!("map of {id}"),
            &format!(
                "{} on the grid, colour range ±{} (99.5th percentile of |value|)",
                esc(&name),
                esc(&plot::tick(lim))
            ),
            size,
        ));
    }
    out.push_str("</div>\n");
    out
}

fn vortex_figures(
    ctx: &mut Ctx<'_>,
    i: usize,
    v: &Vortex,
    model: Option<&FittedModel>,
    nb: &Neighbourhood,
) -> String {
    let (l, u) = (ctx.length.clone(), ctx.velocity.clone());
    let mut out = String::new();
    let r_max = nb.radius;
    let n = 160;
    let rs: Vec<f64> = (1..=n).map(|k| r_max * k as f64 / n as f64).collect();
    let mut curves = Vec::new();
    let mut vlines = Vec::new();
    if let Some(m) = model {
        curves.push(Curve {
            name: format!("fitted {}", v.model),
            points: rs.iter().map(|&r| (r, m.u_theta(r))).collect(),
            colour: plot::MODEL,
            dashed: false,
        });
        if let Some(g) = v.circulation {
            // The irrotational far field Γ/(2πr), shown from rc outwards.
            let rc = v.core_radius.unwrap_or(0.0);
            curves.push(Curve {
                name: "Γ/(2πr)".into(),
                points: rs
                    .iter()
                    .filter(|&&r| r >= rc)
                    .map(|&r| (r, g / (2.0 * std::f64::consts::PI * r)))
                    .collect(),
                colour: plot::RGBColor(120, 120, 120),
                dashed: true,
            });
        }
        if let Some(rc) = v.core_radius {
            vlines.push((rc, "rc".to_string()));
        }
    }
    let spec = ProfileSpec {
        bins: &nb.u_theta,
        curves: &curves,
        vlines: &vlines,
        x_label: format!("r ({l})"),
        y_label: format!("u_θ ({u}), + counter-clockwise"),
        x_max: r_max,
        size: (560, 340),
    };
    if let Some(src) = ctx.write_img(&format!("v{i}_ut.svg"), plot::profile_svg(&spec)) {
        out.push_str(&figure(
            &src,
            "azimuthal velocity profile",
            "Azimuthal velocity u_θ(r) round the fitted centre, convection velocity removed; data binned one grid spacing wide (mean ± 1 standard deviation of the vectors in the bin).",
            Some((560, 340)),
        ));
    }
    if let Some(m) = model.filter(|m| m.has_inflow()) {
        let curves = vec![Curve {
            name: "fitted −γr/2".into(),
            points: rs.iter().map(|&r| (r, m.u_r(r))).collect(),
            colour: plot::MODEL,
            dashed: false,
        }];
        let spec = ProfileSpec {
            bins: &nb.u_r,
            curves: &curves,
            vlines: &vlines,
            x_label: format!("r ({l})"),
            y_label: format!("u_r ({u}), + outwards"),
            x_max: r_max,
            size: (560, 340),
        };
        if let Some(src) = ctx.write_img(&format!("v{i}_ur.svg"), plot::profile_svg(&spec)) {
            out.push_str(&figure(
                &src,
                "radial velocity profile",
                "Radial velocity u_r(r): the Burgers model's in-plane inflow −γr/2 of axisymmetric stretching (Burgers 1948).",
                Some((560, 340)),
            ));
        }
    }
    if model.is_some() {
        let max = nb.residual_max();
        let (cx, cy) = (nb.centre[0], nb.centre[1]);
        let s = 1.15 * nb.radius;
        let cell = |x: f64, y: f64| nb.cell(x, y);
        let mut markers = vec![Marker {
            centre: (cx, cy),
            radius: nb.radius,
            label: String::new(),
            flagged: false,
            thin: true,
        }];
        if let Some(rc) = v.core_radius {
            markers.push(Marker {
                centre: (cx, cy),
                radius: rc,
                label: "rc".into(),
                flagged: false,
                thin: false,
            });
        }
        let spec = MapSpec {
            extent: (cx - s, cx + s, cy - s, cy + s),
            cell: &cell,
            scale: ColourScale::Sequential {
                min: 0.0,
                max: if max > 0.0 { max } else { 1.0 },
            },
            bar_label: format!("|u − u_model| ({u})"),
            x_label: format!("x ({l})"),
            y_label: format!("y ({l})"),
            markers,
            crosses: vec![(cx, cy)],
            dots: v.detect_x.zip(v.detect_y).into_iter().collect(),
            max_width: 520,
            max_height: 340,
        };
        let drawn = plot::map_svg(&spec);
        let size = drawn.as_ref().ok().map(|(_, s)| *s);
        if let Some(src) = ctx.write_img(&format!("v{i}_res.svg"), drawn.map(|(s, _)| s)) {
            out.push_str(&figure(
                &src,
                "residual map",
                "Magnitude of the velocity residual (data − model − convection) inside the fitting window (thin circle); bold circle rc, × fitted centre, dot detected centroid, grey invalid vectors.",
                size,
            ));
        }
    }
    out
}

fn param_rows(
    v: &Vortex,
    survey: &Survey,
    rms: Option<f64>,
    model: Option<&FittedModel>,
) -> String {
    let units = &survey.units;
    let mut t = String::new();
    let mut row = |k: &str, val: String, unit: &str| {
        let _ = writeln!(
            t,
            "<tr><th>{}</th><td class=\"num\">{}</td><td>{}</td></tr>",
            esc(k),
            esc(&val),
            esc(unit)
        );
    };
    row(
        "model · status",
        format!(
            "{} · {}",
            if v.model.is_empty() { "–" } else { &v.model },
            v.status
        ),
        "",
    );
    row(
        "Γ (circulation)",
        num_err(v.circulation, v.circulation_err),
        units.of("circulation"),
    );
    row(
        "rc (core radius)",
        num_err(v.core_radius, v.core_radius_err),
        units.of("core_radius"),
    );
    if v.strain_rate.is_some() || v.model == "burgers" {
        row(
            "γ (strain rate)",
            num_err(v.strain_rate, v.strain_rate_err),
            units.of("strain_rate"),
        );
    }
    if v.strain_rate_viscous.is_some() {
        row(
            "4ν/rc²",
            num(v.strain_rate_viscous),
            units.of("strain_rate_viscous"),
        );
    }
    if v.viscosity_ratio.is_some() {
        row("γ·rc²/(4ν)", num(v.viscosity_ratio), "");
    }
    if let Some(n) = model.and_then(|m| m.exponent) {
        row("Vatistas n (from u_θ,max)", plot::tick(n), "");
    }
    row(
        "u_θ,max (peak velocity)",
        num(v.peak_velocity),
        units.of("peak_velocity"),
    );
    row(
        "centre x, y",
        format!("{}, {}", num(v.x), num(v.y)),
        units.of("x"),
    );
    row(
        "detected centre x, y",
        format!("{}, {}", num(v.detect_x), num(v.detect_y)),
        units.of("x"),
    );
    row(
        "convection u, v",
        format!("{}, {}", num(v.conv_u), num(v.conv_v)),
        units.of("conv_u"),
    );
    row("R²", num(v.r2), "");
    row(
        "RMS residual (catalog)",
        num(v.residual_rms),
        units.of("residual_rms"),
    );
    if let Some(r) = rms.filter(|r| r.is_finite()) {
        row(
            "RMS residual (recomputed)",
            plot::tick(r),
            units.of("residual_rms"),
        );
    }
    row("vectors in window", v.n_points.to_string(), "");
    row(
        "window radius",
        num(v.window_radius),
        units.of("window_radius"),
    );
    if v.inflow_p_value.is_some() {
        row("p-value of inflow", num(v.inflow_p_value), "");
    }
    if v.reynolds.is_some() {
        row("Γ/ν", num(v.reynolds), "");
    }
    t
}

fn vortex_cards(
    page: &mut String,
    ctx: &Ctx<'_>,
    detail: &[(usize, Reason)],
    figs: &BTreeMap<usize, String>,
    notes: &BTreeMap<usize, String>,
    rms: &BTreeMap<usize, f64>,
) {
    let survey = ctx.survey;
    let vs = &survey.vortices;
    let n_flagged = vs.iter().filter(|v| !v.is_clean()).count();
    let shown_flagged = detail
        .iter()
        .filter(|(_, r)| matches!(r, Reason::Flagged { .. }))
        .count();
    page.push_str("<section id=\"vortices\"><h2>Vortices</h2>\n");
    let _ = writeln!(
        page,
        "<p class=\"note\">Flagged fits first, most doubtful first ({shown_flagged} of {n_flagged} flagged fits shown{}), then the {} strongest by |Γ| not already shown, then a random sample of {} others (seed {}). Every fit is in the table at the end.</p>",
        if shown_flagged < n_flagged { "; raise --max-flagged for more" } else { "" },
        ctx.opts.top,
        ctx.opts.sample,
        ctx.opts.seed
    );
    let caveat = {
        let f = &survey.config.fit;
        let mut c = Vec::new();
        if f.background_gradient {
            c.push("the fits included a uniform background gradient that the catalog does not record; curves and residuals leave it out");
        }
        if f.piv_window.is_some() {
            c.push("the fits averaged the models over the PIV window; the curves are the unaveraged models");
        }
        c.join("; ")
    };
    if !caveat.is_empty() {
        let _ = writeln!(page, "<p class=\"note\">Note: {}.</p>", esc(&caveat));
    }
    for &(i, reason) in detail {
        let v = &vs[i];
        let model = FittedModel::from_vortex(v);
        let reason_text = match reason {
            Reason::Flagged { rank } => format!("flagged #{rank}"),
            Reason::Strongest { rank } => format!("#{rank} by |Γ|"),
            Reason::Sample => "random sample".to_string(),
        };
        let _ = write!(
            page,
            "<div class=\"vortex{}\" id=\"v{i}\"><h3>{} · vortex {}</h3><div><span class=\"chip reason\">{}</span>",
            if v.is_clean() { "" } else { " flagged" },
            esc(&v.snapshot),
            v.vortex,
            esc(&reason_text)
        );
        if v.is_clean() {
            page.push_str("<span class=\"chip ok\">no flag</span>");
        }
        for f in v.flag_list() {
            let _ = write!(
                page,
                "<span class=\"chip flag\" title=\"{}\">{}</span>",
                esc(flag_meaning(f)),
                esc(f)
            );
        }
        let sense = match v.sense {
            1 => "counter-clockwise (+1)",
            -1 => "clockwise (−1)",
            _ => "undetermined",
        };
        let _ = write!(
            page,
            "<span class=\"chip\">{}</span></div>\n<div class=\"vgrid\"><table class=\"kv\"><tbody>{}</tbody></table><div class=\"figs\">",
            esc(sense),
            param_rows(v, survey, rms.get(&i).copied(), model.as_ref())
        );
        if let Some(f) = figs.get(&i) {
            page.push_str(f);
        }
        if let Some(n) = notes.get(&i) {
            let _ = write!(page, "<p class=\"note\">{}</p>", esc(n));
        }
        page.push_str("</div></div></div>\n");
    }
    page.push_str("</section>\n");
}

fn seeded_subset<T: Copy>(v: &[T], max: usize, seed: u64) -> Vec<T> {
    if v.len() <= max {
        return v.to_vec();
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut idx: Vec<usize> = sample(&mut rng, v.len(), max).into_vec();
    idx.sort_unstable();
    idx.into_iter().map(|i| v[i]).collect()
}

fn population(page: &mut String, ctx: &mut Ctx<'_>) {
    let survey = ctx.survey;
    let vs = &survey.vortices;
    let units = &survey.units;
    let pop = stats::population(vs, units, false);
    page.push_str("<section id=\"population\"><h2>Population</h2>\n");
    page.push_str("<div class=\"wrap\"><table class=\"sortable\" id=\"stats\"><thead><tr><th>group</th><th>quantity</th><th>unit</th><th>count</th><th>mean</th><th>std</th><th>min</th><th>p05</th><th>p25</th><th>median</th><th>p75</th><th>p95</th><th>max</th></tr></thead><tbody>\n");
    for g in &pop.groups {
        for q in &g.quantities {
            let s = &q.summary;
            let _ = write!(
                page,
                "<tr><td>{}</td><td>{}</td><td>{}</td><td class=\"num\" data-v=\"{}\">{}</td>",
                esc(&g.group),
                esc(q.quantity.label()),
                esc(&q.unit),
                s.count,
                s.count
            );
            for x in [
                s.mean, s.std, s.min, s.p05, s.p25, s.median, s.p75, s.p95, s.max,
            ] {
                let _ = write!(
                    page,
                    "<td class=\"num\" data-v=\"{x:e}\">{}</td>",
                    esc(&num(Some(x)))
                );
            }
            page.push_str("</tr>\n");
        }
    }
    page.push_str("</tbody></table></div>\n<p class=\"note\">Percentiles interpolate linearly between order statistics. |Γ| is the magnitude of the circulation; γ exists for Burgers fits only. The same numbers: <code>vortcat stats DIR</code>.</p>\n<div class=\"pop\">\n");
    let clean: Vec<&Vortex> = vs.iter().filter(|v| v.is_clean()).collect();
    for (q, file) in [
        (Quantity::CoreRadius, "pop_rc.svg"),
        (Quantity::Circulation, "pop_circ.svg"),
        (Quantity::StrainRate, "pop_gamma.svg"),
        (Quantity::PeakVelocity, "pop_peak.svg"),
    ] {
        let all: Vec<f64> = vs.iter().filter_map(|v| q.value(v)).collect();
        if all.is_empty() {
            continue;
        }
        let cl: Vec<f64> = clean.iter().filter_map(|v| q.value(v)).collect();
        let label = format!("{}{}", q.label(), unit_suffix(&q.unit(units)));
        if let Some(src) = ctx.write_img(file, plot::histogram_svg(&all, &cl, &label, (600, 330))) {
            page.push_str(&figure(
                &src,
                &format!("distribution of {}", q.name()),
                &format!("Distribution of {} ({} fits).", esc(q.label()), all.len()),
                Some((600, 330)),
            ));
        }
    }
    let pts = |sel: &dyn Fn(&Vortex) -> bool| -> Vec<(f64, f64)> {
        vs.iter()
            .filter(|v| sel(v))
            .filter_map(|v| {
                Some((
                    Quantity::CoreRadius.value(v)?,
                    Quantity::Circulation.value(v)?,
                ))
            })
            .collect()
    };
    let (c, f) = (pts(&|v| v.is_clean()), pts(&|v| !v.is_clean()));
    let total = c.len() + f.len();
    let max = ctx.opts.max_scatter;
    let (cs, fs) = if total > max {
        let kc = max * c.len() / total.max(1);
        (
            seeded_subset(&c, kc, ctx.opts.seed),
            seeded_subset(&f, max - kc, ctx.opts.seed.wrapping_add(1)),
        )
    } else {
        (c.clone(), f.clone())
    };
    if total > 0 {
        let xl = format!("rc{}", unit_suffix(units.of("core_radius")));
        let yl = format!("|Γ|{}", unit_suffix(units.of("circulation")));
        if let Some(src) = ctx.write_img(
            "pop_rc_circ.svg",
            plot::scatter_svg(&cs, &fs, &xl, &yl, (600, 330)),
        ) {
            let note = if total > max {
                format!(
                    " A seeded sample of {} of {total} fits is drawn.",
                    cs.len() + fs.len()
                )
            } else {
                String::new()
            };
            page.push_str(&figure(
                &src,
                "core radius against circulation",
                &format!("Core radius against |Γ|, logarithmic axes.{note}"),
                Some((600, 330)),
            ));
        }
    }
    page.push_str("</div>\n");
    normalised(page, ctx);
    page.push_str("</section>\n");
}

/// A per-vortex value of a normalised panel.
type Metric = Box<dyn Fn(&Vortex) -> Option<f64>>;

fn normalised(page: &mut String, ctx: &mut Ctx<'_>) {
    let survey = ctx.survey;
    let nu = ctx.opts.viscosity.or(survey.config.fluid.viscosity);
    let eta = ctx
        .opts
        .kolmogorov_length
        .or(survey.config.volume.kolmogorov_eta)
        .or(survey.config.fluid.kolmogorov_length);
    page.push_str("<h3>Kolmogorov-scaled</h3>\n");
    let Some(nu) = nu.filter(|n| *n > 0.0) else {
        page.push_str("<p class=\"note\">Not shown: the config gives no viscosity ν (survey --viscosity, or report --viscosity).</p>\n");
        return;
    };
    let vs = &survey.vortices;
    let clean: Vec<&Vortex> = vs.iter().filter(|v| v.is_clean()).collect();
    let mut panels: Vec<(&str, String, Metric)> = vec![(
        "pop_re.svg",
        "Γ/ν".to_string(),
        Box::new(move |v: &Vortex| v.circulation.map(|g| g.abs() / nu)),
    )];
    if let Some(eta) = eta.filter(|e| *e > 0.0) {
        // τ_η from the config when given with η, else η²/ν (Kolmogorov 1941).
        let tau = survey
            .config
            .volume
            .kolmogorov_tau
            .filter(|t| *t > 0.0 && ctx.opts.kolmogorov_length.is_none())
            .unwrap_or(eta * eta / nu);
        panels.push((
            "pop_rc_eta.svg",
            "rc/η".to_string(),
            Box::new(move |v: &Vortex| v.core_radius.map(|r| r / eta)),
        ));
        panels.push((
            "pop_gamma_tau.svg",
            "γ·τ_η".to_string(),
            Box::new(move |v: &Vortex| v.strain_rate.map(|g| g * tau)),
        ));
        let _ = writeln!(
            page,
            "<p class=\"note\">η = {} {}, ν = {}, τ_η = {} (Kolmogorov 1941). For comparison, the intense vortices of isotropic turbulence have radii of a few η and circulations Γ/ν that grow with the Reynolds number (Jiménez et al. 1993).</p>",
            esc(&plot::tick(eta)),
            esc(survey.units.length()),
            esc(&plot::tick(nu)),
            esc(&plot::tick(tau))
        );
    } else {
        let _ = writeln!(
            page,
            "<p class=\"note\">ν = {}. rc/η and γ·τ_η need the Kolmogorov length η: give it with report --kolmogorov-length (or volume.kolmogorov_eta in the config).</p>",
            esc(&plot::tick(nu))
        );
    }
    page.push_str("<div class=\"pop\">\n");
    for (file, label, f) in panels {
        let all: Vec<f64> = vs.iter().filter_map(&f).filter(|x| x.is_finite()).collect();
        if all.is_empty() {
            continue;
        }
        let cl: Vec<f64> = clean.iter().filter_map(|v| f(v)).collect();
        if let Some(src) = ctx.write_img(file, plot::histogram_svg(&all, &cl, &label, (600, 330))) {
            page.push_str(&figure(
                &src,
                &label,
                &format!("Distribution of {} ({} fits).", esc(&label), all.len()),
                Some((600, 330)),
            ));
        }
    }
    page.push_str("</div>\n");
}

/// Columns of the embedded fit table, in order.
pub const TABLE_COLUMNS: [&str; 17] = [
    "row",
    "snapshot",
    "vortex",
    "sense",
    "model",
    "status",
    "circulation",
    "circulation_err",
    "core_radius",
    "core_radius_err",
    "strain_rate",
    "peak_velocity",
    "r2",
    "residual_rms",
    "n_points",
    "flags",
    "detail",
];

fn table_section(page: &mut String, survey: &Survey, detail: &[(usize, Reason)]) {
    let vs = &survey.vortices;
    let mut snap_index: BTreeMap<&str, usize> = BTreeMap::new();
    let mut snaps: Vec<&str> = Vec::new();
    let has_detail: std::collections::BTreeSet<usize> = detail.iter().map(|d| d.0).collect();
    // Flagged first (most doubtful first), then catalog order.
    let mut order = select::flagged_order(vs);
    order.extend((0..vs.len()).filter(|&i| vs[i].is_clean()));
    let rows: Vec<serde_json::Value> = order
        .iter()
        .map(|&i| {
            let v = &vs[i];
            let s = *snap_index.entry(v.snapshot.as_str()).or_insert_with(|| {
                snaps.push(v.snapshot.as_str());
                snaps.len() - 1
            });
            json!([
                i + 1,
                s,
                v.vortex,
                v.sense,
                v.model,
                v.status,
                round6(v.circulation),
                round6(v.circulation_err),
                round6(v.core_radius),
                round6(v.core_radius_err),
                round6(v.strain_rate),
                round6(v.peak_velocity),
                round6(v.r2),
                round6(v.residual_rms),
                v.n_points,
                v.flags,
                if has_detail.contains(&i) {
                    json!(i)
                } else {
                    serde_json::Value::Null
                },
            ])
        })
        .collect();
    let data = json!({"columns": TABLE_COLUMNS, "snapshots": snaps, "rows": rows});
    let u = &survey.units;
    let _ = write!(
        page,
        "<section id=\"table\"><h2>All fits</h2>\n<p class=\"note\">{} fits, flagged first. Click a column to sort; type to filter by snapshot, flag or an exact value; a linked snapshot has a detail card. <code>row</code> is the line of catalog.csv (1 = first vortex). Values rounded to 6 significant digits; catalog.csv has them in full. Units: Γ {}, rc {}, γ {}, velocities {}.</p>\n\
<div class=\"controls\"><input type=\"search\" placeholder=\"filter: snapshot, flag or value\" aria-label=\"filter\"><label><input type=\"checkbox\"> flagged only</label>\
<button class=\"prev\" type=\"button\">previous</button><button class=\"next\" type=\"button\">next</button><span class=\"pageinfo\"></span></div>\n\
<div class=\"wrap\"><table class=\"sortable\" id=\"fits\" data-source=\"fit-data\" data-page=\"100\"></table></div>\n\
<noscript><p>The table needs JavaScript (inline, no network); catalog.csv holds the same rows.</p></noscript>\n\
<script type=\"application/json\" id=\"fit-data\">{}</script>\n</section>\n",
        vs.len(),
        esc(u.of("circulation")),
        esc(u.of("core_radius")),
        esc(u.of("strain_rate")),
        esc(u.velocity()),
        script_json(&data)
    );
}
