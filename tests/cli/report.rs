//! `vortcat report`, `vortcat rank` and `vortcat stats` end to end: the report's numbers
//! against catalog.csv, escaping of hostile file names, the size bound of a 100,000-vortex
//! report, rankings, statistics and one-line errors.

use std::path::Path;

use crate::harness::{assert_one_line_error, synth_small, vortcat};

fn survey(input: &Path, out: &Path, extra: &[&str]) {
    let mut args = vec![
        "survey".to_string(),
        input.to_string_lossy().into_owned(),
        "--out".into(),
        out.to_string_lossy().into_owned(),
        "--progress".into(),
        "none".into(),
        "--viscosity".into(),
        "1e-6".into(),
    ];
    args.extend(extra.iter().map(|s| s.to_string()));
    let run = vortcat(args);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

/// The JSON of the fit table embedded in the page.
fn fit_data(html: &str) -> serde_json::Value {
    let start_tag = "<script type=\"application/json\" id=\"fit-data\">";
    let start = html.find(start_tag).expect("fit data in page") + start_tag.len();
    let end = start + html[start..].find("</script>").unwrap();
    serde_json::from_str(&html[start..end]).expect("fit data is JSON")
}

fn catalog(out: &Path) -> Vec<csv::StringRecord> {
    let mut r = csv::Reader::from_path(out.join("catalog.csv")).unwrap();
    r.records().map(|r| r.unwrap()).collect()
}

fn header(out: &Path) -> Vec<String> {
    let mut r = csv::Reader::from_path(out.join("catalog.csv")).unwrap();
    r.headers().unwrap().iter().map(str::to_string).collect()
}

fn col(h: &[String], name: &str) -> usize {
    h.iter().position(|c| c == name).unwrap()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()) + 1e-300
}

#[test]
fn report_numbers_match_the_catalog() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 5, &[]);
    let out = dir.path().join("out");
    survey(&data, &out, &["--report"]);
    let index = out.join("report/index.html");
    let html = std::fs::read_to_string(&index).expect("survey --report wrote the page");
    let rows = catalog(&out);
    let h = header(&out);
    assert!(!rows.is_empty());
    let fits = fit_data(&html);
    let cols: Vec<&str> = fits["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let table = fits["rows"].as_array().unwrap();
    assert_eq!(table.len(), rows.len(), "every fit in the table");
    let snaps = fits["snapshots"].as_array().unwrap();
    let mut seen = vec![false; rows.len()];
    for t in table {
        let row_no = t[0].as_u64().unwrap() as usize;
        let c = &rows[row_no - 1];
        seen[row_no - 1] = true;
        let snap = snaps[t[1].as_u64().unwrap() as usize].as_str().unwrap();
        assert_eq!(snap, &c[col(&h, "snapshot")]);
        assert_eq!(t[2].as_u64().unwrap().to_string(), &c[col(&h, "vortex")]);
        assert_eq!(t[15].as_str().unwrap(), &c[col(&h, "flags")]);
        for name in [
            "circulation",
            "core_radius",
            "peak_velocity",
            "r2",
            "strain_rate",
        ] {
            let k = cols.iter().position(|c| *c == name).unwrap();
            let csv_text = &c[col(&h, name)];
            if csv_text.is_empty() {
                assert!(t[k].is_null(), "{name}: empty in csv, {} in report", t[k]);
            } else {
                let want: f64 = csv_text.parse().unwrap();
                let got = t[k].as_f64().unwrap();
                // The table rounds to 6 significant digits: relative error below 5e-6.
                assert!(close(got, want, 5e-6), "{name}: {got} vs {want}");
            }
        }
    }
    assert!(seen.iter().all(|&s| s), "each catalog row once");
    // Flagged rows first in the table.
    let flagged: Vec<bool> = table
        .iter()
        .map(|t| !t[15].as_str().unwrap().is_empty())
        .collect();
    let first_clean = flagged.iter().position(|f| !f).unwrap_or(flagged.len());
    assert!(flagged[first_clean..].iter().all(|f| !f));

    // Overview counts.
    let n_flagged = rows
        .iter()
        .filter(|r| !r[col(&h, "flags")].is_empty())
        .count();
    assert!(html.contains(&format!(
        "<div class=\"v\">{}</div><div class=\"k\">vortices</div>",
        rows.len()
    )));
    assert!(html.contains(&format!(
        "<div class=\"v\">{n_flagged}</div><div class=\"k\">flagged fits</div>"
    )));
    // Every referenced figure exists beside the page; no network resource is referenced.
    let mut n_img = 0;
    for part in html.split("<img src=\"").skip(1) {
        let src = &part[..part.find('"').unwrap()];
        assert!(src.starts_with("img/"), "local image: {src}");
        assert!(out.join("report").join(src).is_file(), "{src} missing");
        n_img += 1;
    }
    assert!(n_img >= 5, "maps, profiles and population figures: {n_img}");
    assert!(!html.contains("http://") && !html.contains("https://"));
    // Snapshot maps: one per snapshot here (5 < the default bound of 24).
    assert_eq!(html.matches("<div class=\"snap\" id=\"map").count(), 5);

    // The median |Γ| of `stats --json` against the catalog.
    let run = vortcat(["stats", out.to_str().unwrap(), "--json"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let stats: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
    let all = &stats["groups"][0];
    assert_eq!(all["group"], "all");
    assert_eq!(all["vortices"].as_u64().unwrap() as usize, rows.len());
    let mut circ: Vec<f64> = rows
        .iter()
        .filter_map(|r| r[col(&h, "circulation")].parse::<f64>().ok())
        .map(f64::abs)
        .collect();
    circ.sort_by(f64::total_cmp);
    let n = circ.len();
    let median = if n % 2 == 1 {
        circ[n / 2]
    } else {
        0.5 * (circ[n / 2 - 1] + circ[n / 2])
    };
    let q = all["quantities"]
        .as_array()
        .unwrap()
        .iter()
        .find(|q| q["quantity"] == "circulation")
        .unwrap();
    assert_eq!(q["count"].as_u64().unwrap() as usize, n);
    // Same values, same arithmetic: agreement to rounding.
    assert!(close(q["median"].as_f64().unwrap(), median, 1e-12));
    let by_sense: u64 = stats["groups"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|g| g["group"].as_str().unwrap().starts_with("sense="))
        .map(|g| g["vortices"].as_u64().unwrap())
        .sum();
    assert_eq!(by_sense as usize, rows.len());
    let text = vortcat(["stats", out.to_str().unwrap()]);
    assert_eq!(text.code, 0);
    assert!(text.stdout.contains("model=") && text.stdout.contains("median"));
}

#[test]
fn hostile_file_name_produces_no_script() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 1, &[]);
    let snap = std::fs::read_dir(&data)
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.extension().is_some_and(|e| e == "npz"))
        .expect("a synthetic snapshot");
    // A file name cannot hold '/', so the hostile path is the folder `<script>alert(1)<` with
    // the file `script>.npz` in it: the path reads `<script>alert(1)</script>.npz`.
    let hostile = dir.path().join("in");
    std::fs::create_dir_all(hostile.join("<script>alert(1)<")).unwrap();
    let file = hostile.join("<script>alert(1)</script>.npz");
    std::fs::rename(&snap, &file).unwrap();
    let out = dir.path().join("out");
    survey(&file, &out, &[]);
    let run = vortcat(["report", out.to_str().unwrap()]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let html = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(
        !html.contains("<script>alert"),
        "unescaped name in the page"
    );
    assert!(!html.contains("alert(1)</script>"));
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;.npz"));
    // Exactly the page's own two script elements: the table data and the table script.
    assert_eq!(html.matches("<script").count(), 2, "script elements");
    // The name sits in the embedded data too, with < and > escaped for JSON in a script.
    let fits = fit_data(&html);
    let snaps = fits["snapshots"].as_array().unwrap();
    assert!(snaps[0]
        .as_str()
        .unwrap()
        .ends_with("<script>alert(1)</script>.npz#0"));
    for entry in std::fs::read_dir(out.join("report/img")).unwrap() {
        let svg = std::fs::read_to_string(entry.unwrap().path()).unwrap();
        assert!(!svg.contains("<script"), "no script in figures");
    }
}

#[test]
fn rank_orders_by_magnitude_and_filters() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    synth_small(&data, 4, &[]);
    let out = dir.path().join("out");
    survey(&data, &out, &[]);
    let run = vortcat([
        "rank",
        out.to_str().unwrap(),
        "--by",
        "circulation",
        "--csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let mut r = csv::Reader::from_reader(run.stdout.as_bytes());
    let h: Vec<String> = r.headers().unwrap().iter().map(str::to_string).collect();
    let rows: Vec<csv::StringRecord> = r.records().map(|r| r.unwrap()).collect();
    let fitted = catalog(&out)
        .iter()
        .filter(|c| !c[col(&header(&out), "circulation")].is_empty())
        .count();
    assert_eq!(rows.len(), fitted);
    let mags: Vec<f64> = rows
        .iter()
        .map(|r| r[col(&h, "circulation")].parse::<f64>().unwrap().abs())
        .collect();
    assert!(mags.windows(2).all(|w| w[0] >= w[1]), "descending |Γ|");
    assert_eq!(&rows[0][col(&h, "rank")], "1");

    let top = vortcat([
        "rank",
        out.to_str().unwrap(),
        "--by",
        "r2",
        "--top",
        "3",
        "--only-clean",
        "--ascending",
        "--csv",
    ]);
    assert_eq!(top.code, 0, "{}", top.stderr);
    let mut r = csv::Reader::from_reader(top.stdout.as_bytes());
    let rows: Vec<csv::StringRecord> = r.records().map(|r| r.unwrap()).collect();
    assert_eq!(rows.len(), 3);
    assert!(rows.iter().all(|r| r[col(&h, "flags")].is_empty()));
    let r2: Vec<f64> = rows
        .iter()
        .map(|r| r[col(&h, "r2")].parse().unwrap())
        .collect();
    assert!(r2.windows(2).all(|w| w[0] <= w[1]), "ascending R²");

    let table = vortcat(["rank", out.to_str().unwrap(), "--by", "core_radius"]);
    assert_eq!(table.code, 0);
    assert!(table
        .stdout
        .contains("ranked by core_radius, largest first"));
    let bad = vortcat(["rank", out.to_str().unwrap(), "--by", "size"]);
    assert_one_line_error(&bad, &["unknown quantity 'size'"]);
}

#[test]
fn not_a_survey_is_one_line_errors() {
    for cmd in ["report", "stats"] {
        let run = vortcat([cmd, "/not/a/survey"]);
        assert_one_line_error(&run, &["/not/a/survey", "no such folder"]);
    }
    let dir = tempfile::tempdir().unwrap();
    let run = vortcat(["rank", dir.path().to_str().unwrap(), "--by", "r2"]);
    assert_one_line_error(&run, &["no catalog.csv"]);
    std::fs::write(
        dir.path().join("catalog.csv"),
        "snapshot,vortex\nx,notanumber\n",
    )
    .unwrap();
    let run = vortcat(["report", dir.path().to_str().unwrap()]);
    assert_one_line_error(&run, &["catalog.csv", "row 1"]);
}

/// A fabricated survey of 100,000 vortices over 25,000 snapshots (files that do not exist:
/// the per-snapshot maps and detail figures are then skipped with a note, and the bound under
/// test is the size of the page and its tables): the report stays under 50 MB.
#[test]
fn report_of_100000_vortices_stays_small() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path();
    let data = dir.path().join("data");
    synth_small(&data, 1, &[]);
    let real = dir.path().join("real");
    survey(&data, &real, &[]);
    for f in ["config.toml", "units.csv"] {
        std::fs::copy(real.join(f), out.join(f)).unwrap();
    }
    let h = header(&real);
    let mut w = csv::Writer::from_path(out.join("catalog.csv")).unwrap();
    w.write_record(&h).unwrap();
    let n = 100_000;
    let mut snapshots = Vec::new();
    for i in 0..n {
        let s = i / 4;
        let file = format!("/data/run_{:05}/frame_{s:06}.npz", s / 1000);
        if i % 4 == 0 {
            snapshots.push(serde_json::json!({"snapshot": format!("{file}#0"), "status": "done", "error": null}));
        }
        let x = 0.37 + (i as f64 * 0.618).fract();
        let values: Vec<String> = h
            .iter()
            .map(|c| match c.as_str() {
                "snapshot" => format!("{file}#0"),
                "vortex" => (i % 4 + 1).to_string(),
                "file" => file.clone(),
                "index" => "0".into(),
                "time" => format!("{}", s as f64 * 0.04),
                "x" | "detect_x" => format!("{x}"),
                "y" | "detect_y" => format!("{}", 0.01 * x),
                "sense" => if i % 2 == 0 { "1" } else { "-1" }.into(),
                "model" => if i % 3 == 0 { "burgers" } else { "lamb-oseen" }.into(),
                "status" => "converged".into(),
                "circulation" => format!("{}", if i % 2 == 0 { 1.0 } else { -1.0 } * 1e-3 * x),
                "circulation_err" => format!("{}", 1e-6 * x),
                "core_radius" => format!("{}", 3e-3 * x),
                "core_radius_err" => format!("{}", 2e-5 * x),
                "strain_rate" if i % 3 == 0 => format!("{}", 1.5 * x),
                "peak_velocity" => format!("{}", 0.05 * x),
                "n_points" => "400".into(),
                "r2" => format!("{}", 0.8 + 0.19 * x.fract()),
                "residual_rms" => "0.002".into(),
                "window_radius" => "0.01".into(),
                "criterion_peak" => "20".into(),
                "equivalent_radius" => "0.004".into(),
                "flags" => if i % 10 == 0 { "low_r_squared" } else { "" }.into(),
                _ => String::new(),
            })
            .collect();
        w.write_record(&values).unwrap();
    }
    w.flush().unwrap();
    let manifest = serde_json::json!({
        "version": "0.1.0", "git_commit": "unknown", "command": ["vortcat", "survey"],
        "config_sha256": "", "inputs": [], "snapshots": snapshots,
        "started": "", "ended": "", "threads": 2,
    });
    std::fs::write(out.join("run.json"), manifest.to_string()).unwrap();

    let run = vortcat(["report", out.to_str().unwrap()]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let report = out.join("report");
    let mut bytes = std::fs::metadata(report.join("index.html")).unwrap().len();
    for e in std::fs::read_dir(report.join("img")).unwrap() {
        bytes += e.unwrap().metadata().unwrap().len();
    }
    println!("report of {n} vortices: {bytes} bytes");
    assert!(bytes < 50_000_000, "report is {bytes} bytes");
    let html = std::fs::read_to_string(report.join("index.html")).unwrap();
    assert_eq!(fit_data(&html)["rows"].as_array().unwrap().len(), n);
    // Bounded detail: 200 flagged + 20 strongest + 20 sampled cards, 24 snapshot entries.
    assert_eq!(html.matches("<div class=\"vortex").count(), 240);
    assert_eq!(html.matches("<div class=\"snap\"").count(), 24);
    assert!(html.contains("200 of 10000 flagged fits shown"));
}
