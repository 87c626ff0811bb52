//! HTML helpers: escaping of every string that reaches the page, JSON safe to embed in a
//! `<script>` element, and the page's own style sheet and table script (no network).

/// Escapes text for HTML element content and quoted attribute values.
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// JSON text that can sit inside `<script type="application/json">`: `<`, `>` and `&` are
/// written as `\u003c`, `\u003e`, `\u0026` (valid JSON string escapes; outside strings JSON
/// has no such characters), so no `</script>` or `<!--` can appear.
pub fn script_json(value: &serde_json::Value) -> String {
    value
        .to_string()
        .replace('<', "\\u003c")
        .replace('>', "\\u003e")
        .replace('&', "\\u0026")
}

/// The style sheet.
pub const STYLE: &str = r##"
:root { --ink:#1d2330; --muted:#5b6475; --line:#d9dde5; --bg:#f6f7f9; --card:#ffffff;
        --flag:#d6008f; --clean:#2166ac; --accent:#e6550d; }
* { box-sizing: border-box; }
body { margin:0; font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif;
       color: var(--ink); background: var(--bg); }
header { background:#1d2330; color:#fff; padding:18px 28px 14px; }
header h1 { margin:0 0 4px; font-size:22px; font-weight:600; }
header .sub { color:#c5cad6; font-size:13px; word-break: break-all; }
nav { position: sticky; top:0; z-index:5; background:#fff; border-bottom:1px solid var(--line);
      padding:8px 28px; display:flex; gap:18px; flex-wrap:wrap; }
nav a { color: var(--ink); text-decoration:none; font-weight:500; font-size:14px; }
nav a:hover { color: var(--accent); }
main { max-width: 1280px; margin: 0 auto; padding: 8px 28px 60px; }
section { margin-top: 28px; }
h2 { font-size:20px; border-bottom:2px solid var(--ink); padding-bottom:4px; margin: 0 0 12px; }
h3 { font-size:16px; margin: 0 0 6px; word-break: break-all; }
p.note, .note { color: var(--muted); font-size: 13px; }
.cards { display:grid; grid-template-columns: repeat(auto-fit, minmax(150px, 1fr)); gap:10px; margin: 10px 0 16px; }
.stat { background:var(--card); border:1px solid var(--line); border-radius:8px; padding:10px 14px; }
.stat .v { font-size:24px; font-weight:600; }
.stat .k { color:var(--muted); font-size:12px; text-transform: uppercase; letter-spacing: .04em; }
.stat.bad .v { color: var(--flag); }
table { border-collapse: collapse; background: var(--card); font-size: 13px; }
th, td { border:1px solid var(--line); padding: 4px 8px; text-align:left; vertical-align: top; }
th { background:#eef0f4; font-weight:600; }
td.num { text-align:right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.kv th { width: 190px; }
.wrap { overflow-x:auto; }
pre { background:#fff; border:1px solid var(--line); padding:10px; overflow:auto; font-size:12px; max-height: 360px; }
details summary { cursor:pointer; font-weight:500; margin: 6px 0; }
figure { margin: 0; background:#fff; border:1px solid var(--line); border-radius:6px; padding:6px; }
figure img { display:block; max-width:100%; height:auto; }
figcaption { font-size: 12px; color: var(--muted); padding: 4px 4px 0; }
.snap { background: var(--card); border:1px solid var(--line); border-radius:8px; padding:12px; margin-bottom:16px; }
.vortex { background: var(--card); border:1px solid var(--line); border-left: 5px solid var(--clean);
          border-radius:8px; padding:12px 14px; margin-bottom:18px; }
.vortex.flagged { border-left-color: var(--flag); }
.vgrid { display:grid; grid-template-columns: minmax(280px, 360px) 1fr; gap: 14px; align-items:start; }
.figs { display:grid; grid-template-columns: repeat(auto-fit, minmax(380px, 1fr)); gap: 10px; }
@media (max-width: 900px) { .vgrid { grid-template-columns: 1fr; } }
.chip { display:inline-block; padding: 1px 8px; border-radius: 10px; font-size: 12px; margin: 0 4px 4px 0;
        border:1px solid var(--line); background:#f1f2f5; }
.chip.flag { background:#fde6f4; border-color:#f3b3da; color:#8a005c; }
.chip.reason { background:#e8f0fa; border-color:#b8cde8; color:#1b4f8a; }
.chip.ok { background:#e7f5ea; border-color:#b6dfc0; color:#1e6b33; }
.pop { display:grid; grid-template-columns: repeat(auto-fit, minmax(420px, 1fr)); gap: 12px; }
.controls { display:flex; gap:14px; align-items:center; flex-wrap:wrap; margin: 6px 0 8px; font-size:13px; }
.controls input[type=search] { padding:4px 8px; width: 280px; border:1px solid var(--line); border-radius:4px; }
.controls button { padding: 3px 10px; }
table.sortable th { cursor: pointer; user-select: none; white-space: nowrap; }
table.sortable th.asc::after { content: " \25B2"; font-size: 10px; }
table.sortable th.desc::after { content: " \25BC"; font-size: 10px; }
tr.flagged td:first-child { box-shadow: inset 4px 0 0 var(--flag); }
.legend-sw { display:inline-block; width:12px; height:12px; vertical-align:-2px; border:1px solid #888; margin: 0 4px 0 10px; }
"##;

/// The table script: sorting, filtering and paging of tables whose rows are JSON in the page.
/// Cells are written with `textContent`, never parsed as HTML.
pub const SCRIPT: &str = r##"
(function () {
  "use strict";
  function fmt(v) {
    if (v === null || v === undefined) return "";
    if (typeof v === "number") {
      if (!isFinite(v)) return "";
      var a = Math.abs(v);
      if (a === 0) return "0";
      if (Number.isInteger(v) && a < 1e6) return String(v);
      if (a >= 1e-2 && a < 1e4) return v.toPrecision(4).replace(/\.?0+$/, "");
      return v.toExponential(3);
    }
    return String(v);
  }
  function cmp(a, b) {
    var na = (a === null || a === undefined || a === ""), nb = (b === null || b === undefined || b === "");
    if (na && nb) return 0; if (na) return 1; if (nb) return -1;
    if (typeof a === "number" && typeof b === "number") return a - b;
    return String(a).localeCompare(String(b));
  }
  function setup(table) {
    var src = document.getElementById(table.getAttribute("data-source"));
    if (!src) return;
    var data = JSON.parse(src.textContent);
    var cols = data.columns, rows = data.rows, snaps = data.snapshots || [];
    var si = cols.indexOf("snapshot"), fi = cols.indexOf("flags"), di = cols.indexOf("detail");
    var per = parseInt(table.getAttribute("data-page") || "100", 10);
    var view = rows.slice(), page = 0, sortCol = -1, dir = 1;
    var box = table.parentNode.parentNode;
    var q = box.querySelector("input[type=search]"), only = box.querySelector("input[type=checkbox]");
    var info = box.querySelector(".pageinfo"), prev = box.querySelector(".prev"), next = box.querySelector(".next");
    var thead = table.createTHead(), hr = thead.insertRow();
    cols.forEach(function (c, k) {
      if (k === di) return;
      var th = document.createElement("th"); th.textContent = c;
      th.addEventListener("click", function () {
        if (sortCol === k) dir = -dir; else { sortCol = k; dir = 1; }
        Array.prototype.forEach.call(hr.children, function (h) { h.classList.remove("asc", "desc"); });
        th.classList.add(dir > 0 ? "asc" : "desc");
        apply();
      });
      hr.appendChild(th);
    });
    var tbody = table.createTBody();
    function value(r, k) { return k === si ? snaps[r[k]] : r[k]; }
    function apply() {
      var text = q ? q.value.toLowerCase() : "";
      view = rows.filter(function (r) {
        if (only && only.checked && fi >= 0 && !r[fi]) return false;
        if (!text) return true;
        return String(value(r, si)).toLowerCase().indexOf(text) >= 0 ||
               (fi >= 0 && String(r[fi]).toLowerCase().indexOf(text) >= 0) ||
               cols.some(function (c, k) { return k !== si && k !== fi && k !== di && String(r[k]).toLowerCase() === text; });
      });
      if (sortCol >= 0) view.sort(function (a, b) { return dir * cmp(value(a, sortCol), value(b, sortCol)); });
      page = 0; render();
    }
    function render() {
      while (tbody.firstChild) tbody.removeChild(tbody.firstChild);
      var pages = Math.max(1, Math.ceil(view.length / per));
      if (page >= pages) page = pages - 1;
      view.slice(page * per, page * per + per).forEach(function (r) {
        var tr = tbody.insertRow();
        if (fi >= 0 && r[fi]) tr.className = "flagged";
        cols.forEach(function (c, k) {
          if (k === di) return;
          var td = tr.insertCell(), v = value(r, k);
          if (typeof v === "number") td.className = "num";
          if (k === si && di >= 0 && r[di] !== null && r[di] !== undefined) {
            var a = document.createElement("a"); a.href = "#v" + r[di]; a.textContent = fmt(v); td.appendChild(a);
          } else td.textContent = fmt(v);
        });
      });
      if (info) info.textContent = view.length ? ("rows " + (page * per + 1) + "\u2013" + Math.min(view.length, page * per + per) + " of " + view.length) : "no rows";
      if (prev) prev.disabled = page === 0;
      if (next) next.disabled = page >= pages - 1;
    }
    if (q) q.addEventListener("input", apply);
    if (only) only.addEventListener("change", apply);
    if (prev) prev.addEventListener("click", function () { page--; render(); });
    if (next) next.addEventListener("click", function () { page++; render(); });
    render();
  }
  function sortStatic(table) {
    var ths = table.tHead ? table.tHead.rows[0].cells : [];
    Array.prototype.forEach.call(ths, function (th, k) {
      var dir = 1;
      th.addEventListener("click", function () {
        var body = table.tBodies[0], rs = Array.prototype.slice.call(body.rows);
        rs.sort(function (a, b) {
          var x = a.cells[k].getAttribute("data-v"), y = b.cells[k].getAttribute("data-v");
          var p = x !== null ? parseFloat(x) : a.cells[k].textContent, s = y !== null ? parseFloat(y) : b.cells[k].textContent;
          if (typeof p === "number" && isNaN(p)) p = null; if (typeof s === "number" && isNaN(s)) s = null;
          return dir * cmp(p, s);
        });
        Array.prototype.forEach.call(ths, function (h) { h.classList.remove("asc", "desc"); });
        th.classList.add(dir > 0 ? "asc" : "desc"); dir = -dir;
        rs.forEach(function (r) { body.appendChild(r); });
      });
    });
  }
  document.querySelectorAll("table[data-source]").forEach(setup);
  document.querySelectorAll("table.sortable:not([data-source])").forEach(sortStatic);
  document.body.setAttribute("data-ready", "1");
})();
"##;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup_and_quotes() {
        assert_eq!(
            esc("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
    }

    #[test]
    fn embedded_json_cannot_close_the_script_and_parses_back() {
        let v = serde_json::json!({"name": "</script><script>alert(1)</script> & <!--"});
        let s = script_json(&v);
        assert!(!s.contains('<') && !s.contains('>') && !s.contains('&'));
        let back: serde_json::Value = serde_json::from_str(&s).unwrap();
        assert_eq!(back, v);
    }
}
