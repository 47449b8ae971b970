//! The report page: one self-contained HTML document (inline CSS and inline SVG, no script,
//! nothing fetched), its escaping and its number formatting.
//!
//! Owns the page structure and style only; figures come from `plots.rs`, the methods text
//! from `methods.rs`, every value from `data.rs`. Output depends on the data alone (no clock,
//! no environment), so a rerun of the same analysis gives a byte-identical page.

use std::fmt::Write as _;

use super::data::{CellPlots, ContrastLine, MatrixPlot, ReportData, ResultLine};
use super::plots;

/// Shown under the title and again in the footer.
const CAUTION: &str = "nevermet is a research analysis tool. Its results describe groups of \
recorded sessions under the stated assumptions; it is not a clinical or diagnostic instrument \
and must not be used to assess an individual.";

/// Replaces the characters that are markup in HTML text and attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            other => out.push(other),
        }
    }
    out
}

/// Compact number: three significant digits (more only for integers up to 99 999),
/// scientific notation outside [0.001, 100 000), trailing zeros dropped, NaN as an en dash.
pub fn num(x: f64) -> String {
    if x.is_nan() {
        return "–".to_owned();
    }
    if x.is_infinite() {
        return if x > 0.0 { "∞" } else { "-∞" }.to_owned();
    }
    if x == 0.0 {
        return "0".to_owned();
    }
    let a = x.abs();
    if !(1e-3..1e5).contains(&a) {
        let s = format!("{x:.2e}");
        let (mantissa, exponent) = s.split_once('e').unwrap_or((&s, "0"));
        return format!("{}e{exponent}", trim_zeros(mantissa));
    }
    let magnitude = a.log10().floor() as i32;
    let decimals = (2 - magnitude).max(0) as usize;
    let s = format!("{x:.decimals$}");
    let s = trim_zeros(&s);
    if s == "-0" { "0".to_owned() } else { s }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_owned()
    } else {
        s.to_owned()
    }
}

fn interval(lo: f64, hi: f64) -> String {
    if lo.is_nan() && hi.is_nan() {
        "–".to_owned()
    } else {
        format!("[{}, {}]", num(lo), num(hi))
    }
}

/// The significance marker: text as well as emphasis, so it survives greyscale printing and
/// does not depend on colour vision.
fn marker(significant: bool) -> &'static str {
    if significant {
        "<td class=\"mark\">✓ yes</td>"
    } else {
        "<td class=\"mark\">no</td>"
    }
}

const STYLE: &str = r#"
:root {
  --ink: #1d1d1f; --muted: #5a5a5a; --rule: #d4d4d4; --soft: #f5f5f3;
  --accent: #1f4e79; --warn: #b33c00; --sig: #fff3d1;
}
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body {
  margin: 0; background: #fff; color: var(--ink);
  font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", "Noto Sans",
    "Liberation Sans", Arial, sans-serif;
  font-size: 15px; line-height: 1.5;
}
main { max-width: 1160px; margin: 0 auto; padding: 32px 28px 24px; }
h1 { font-size: 1.75rem; line-height: 1.25; margin: 0 0 .25rem; }
h2 { font-size: 1.25rem; margin: 2.2rem 0 .6rem; padding-bottom: .25rem;
  border-bottom: 1px solid var(--rule); }
h3 { font-size: 1.05rem; margin: 1.6rem 0 .5rem; }
p { margin: .4rem 0 .8rem; }
.sub { color: var(--muted); margin: 0 0 1rem; }
.caution { border-left: 4px solid var(--warn); background: #fbf4ef; padding: .55rem .9rem;
  margin: 1rem 0; }
nav.toc { font-size: .9rem; color: var(--muted); margin: .6rem 0 0; }
nav.toc a { color: var(--accent); text-decoration: none; margin-right: .9rem; }
nav.toc a:hover { text-decoration: underline; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-size: .86rem; font-variant-numeric: tabular-nums;
  margin: .3rem 0 .6rem; }
th, td { padding: .28rem .4rem; border-bottom: 1px solid var(--rule); text-align: left;
  vertical-align: top; }
thead th { border-bottom: 2px solid var(--ink); font-weight: 600; vertical-align: bottom; }
td.n, th.n { text-align: right; }
td.n, td.mark { white-space: nowrap; }
tr.sig td { background: var(--sig); font-weight: 600; }
table.kv th { font-weight: normal; color: var(--muted); border-bottom: 1px solid var(--rule); }
table.kv td { font-weight: 600; }
.overview { display: flex; flex-wrap: wrap; gap: 0 64px; align-items: flex-start; }
.overview > section { flex: 0 1 auto; }
.pair-tables { display: flex; flex-wrap: wrap; gap: 0 40px; align-items: flex-start; }
.pair-tables .legend { max-width: 34ch; }
.pair-tables h3 { margin: .2rem 0 .3rem; font-size: .95rem; }
.legend { font-size: .85rem; color: var(--muted); margin-top: 0; }
#methods { max-width: 78ch; text-align: left; hyphens: auto; }
.cell { margin-top: 1.4rem; }
.cell h3 { display: flex; flex-wrap: wrap; gap: .6rem; align-items: baseline; }
.badge { font-size: .78rem; font-weight: 600; border: 1px solid var(--muted); color: var(--muted);
  border-radius: 3px; padding: 0 .4rem; white-space: nowrap; }
.badge.sig { border-color: var(--warn); color: var(--warn); }
.figures { display: flex; flex-wrap: wrap; gap: 16px 24px; }
figure { margin: 0; max-width: 100%; }
.figures figure { flex: 1 1 440px; max-width: 560px; }
figure.wide { overflow-x: auto; }
figcaption { font-size: .84rem; color: var(--muted); max-width: 560px; margin-top: .2rem; }
svg { display: block; max-width: 100%; height: auto; }
figure.wide svg { max-width: none; }
svg text { font-family: inherit; }
ul.warnings li { margin-bottom: .3rem; }
footer { max-width: 1160px; margin: 2.5rem auto 0; padding: 1rem 28px 2rem;
  border-top: 1px solid var(--rule); color: var(--muted); font-size: .85rem; }
@page { margin: 15mm 14mm; }
@media print {
  body { font-size: 10pt; background: #fff; color: #000; }
  main, footer { max-width: none; padding-left: 0; padding-right: 0; }
  nav.toc { display: none; }
  a { color: inherit; text-decoration: none; }
  .caution { background: none; }
  tr.sig td { background: none; }
  table { font-size: 8.5pt; }
  tr, figure { break-inside: avoid; page-break-inside: avoid; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  .cell, #matrix { break-before: page; page-break-before: always; }
  .scroll, figure.wide { overflow: visible; }
  figure.wide svg { max-width: 100%; }
}
"#;

/// Renders the whole report page.
pub fn render(data: &ReportData) -> String {
    let mut page = String::with_capacity(64 * 1024);
    let title = escape(&data.title);
    page.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    page.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
    let _ = writeln!(
        page,
        "<meta name=\"generator\" content=\"nevermet {}\">",
        escape(&data.tool_version)
    );
    let _ = writeln!(page, "<title>{title}</title>");
    let _ = writeln!(page, "<style>{STYLE}</style>\n</head>\n<body>\n<main>");

    let _ = writeln!(page, "<header>\n<h1>{title}</h1>");
    let _ = writeln!(
        page,
        "<p class=\"sub\">Pseudo-dyad permutation report · nevermet {} · {}</p>",
        escape(&data.tool_version),
        escape(&data.generated_note)
    );
    let _ = writeln!(
        page,
        "<p class=\"caution\" role=\"note\"><strong>Research use only.</strong> {}</p>",
        escape(CAUTION)
    );
    page.push_str(&toc(data));
    page.push_str("</header>\n");

    page.push_str("<div class=\"overview\">\n");
    section_study(&mut page, data);
    section_pairing(&mut page, data);
    page.push_str("</div>\n");
    let _ = writeln!(
        page,
        "<section id=\"methods-section\">\n<h2>Methods</h2>\n<p id=\"methods\">{}</p>\n</section>",
        escape(&data.methods)
    );
    section_results(&mut page, &data.results);
    section_contrasts(&mut page, &data.contrasts);
    section_cells(&mut page, &data.cells);
    if let Some(m) = &data.matrix {
        section_matrix(&mut page, m);
    }
    section_warnings(&mut page, &data.warnings);

    page.push_str("</main>\n<footer>\n");
    let _ = writeln!(
        page,
        "<p>Generated by nevermet {} ({}).</p>\n<p>{}</p>",
        escape(&data.tool_version),
        escape(&data.generated_note),
        escape(CAUTION)
    );
    page.push_str("</footer>\n</body>\n</html>\n");
    page
}

fn toc(data: &ReportData) -> String {
    let mut links = vec![
        ("study", "Study"),
        ("pairing", "Pairing"),
        ("methods-section", "Methods"),
        ("results", "Results"),
        ("contrasts", "Contrasts"),
    ];
    if !data.cells.is_empty() {
        links.push(("cells", "Cells"));
    }
    if data.matrix.is_some() {
        links.push(("matrix", "Pairing matrix"));
    }
    links.push(("warnings", "Warnings"));
    let mut out = String::from("<nav class=\"toc\" aria-label=\"Sections\">");
    for (id, name) in links {
        let _ = write!(out, "<a href=\"#{id}\">{name}</a>");
    }
    out.push_str("</nav>\n");
    out
}

/// A two-column label/value table.
fn kv_table(out: &mut String, rows: &[(String, String)]) {
    out.push_str("<table class=\"kv\">\n<tbody>\n");
    for (label, value) in rows {
        let _ = writeln!(
            out,
            "<tr><th scope=\"row\">{}</th><td class=\"n\">{}</td></tr>",
            escape(label),
            escape(value)
        );
    }
    out.push_str("</tbody>\n</table>\n");
}

fn section_study(out: &mut String, data: &ReportData) {
    out.push_str("<section id=\"study\">\n<h2>The study in numbers</h2>\n");
    if data.study_numbers.is_empty() {
        out.push_str("<p>No study summary was recorded.</p>\n");
    } else {
        kv_table(out, &data.study_numbers);
    }
    out.push_str("</section>\n");
}

fn section_pairing(out: &mut String, data: &ReportData) {
    out.push_str("<section id=\"pairing\">\n<h2>Pairing</h2>\n<div class=\"pair-tables\">\n");
    out.push_str("<div>\n<h3>Candidate pairs</h3>\n");
    if data.pairing_counts.is_empty() {
        out.push_str("<p>No pairing counts were recorded.</p>\n");
    } else {
        kv_table(out, &data.pairing_counts);
    }
    out.push_str("</div>\n<div>\n<h3>Exclusion rules</h3>\n");
    if data.rules.is_empty() {
        out.push_str("<p>No exclusion rule applied.</p>\n");
    } else {
        out.push_str(
            "<table>\n<thead><tr><th scope=\"col\">Rule</th>\
             <th scope=\"col\" class=\"n\">Candidates excluded</th></tr></thead>\n<tbody>\n",
        );
        for (rule, n) in &data.rules {
            let _ = writeln!(
                out,
                "<tr><td>{}</td><td class=\"n\">{n}</td></tr>",
                escape(rule)
            );
        }
        out.push_str("</tbody>\n</table>\n");
        out.push_str(
            "<p class=\"legend\">A candidate can be excluded by several rules, so the \
             counts may sum to more than the excluded total.</p>\n",
        );
    }
    out.push_str("</div>\n</div>\n</section>\n");
}

fn head(cols: &[(&str, bool)]) -> String {
    let mut out = String::from("<thead><tr>");
    for (name, numeric) in cols {
        let class = if *numeric { " class=\"n\"" } else { "" };
        let _ = write!(out, "<th scope=\"col\"{class}>{name}</th>");
    }
    out.push_str("</tr></thead>\n");
    out
}

fn row_open(significant: bool) -> &'static str {
    if significant {
        "<tr class=\"sig\">"
    } else {
        "<tr>"
    }
}

const SIG_LEGEND: &str = "<p class=\"legend\">Sig. ✓ yes: significant, i.e. the adjusted p-value \
is below the α stated in the methods; such rows are also set in bold. p: unadjusted \
p-value; p adj.: after the correction named in the header or the row. CI: two-sided (1 − α) interval, a \
percentile bootstrap over dyads for <em>re-pairing</em> and a t interval for the dyad-level \
tests. –: no value.</p>\n";

fn section_results(out: &mut String, results: &[ResultLine]) {
    out.push_str("<section id=\"results\">\n<h2>Results</h2>\n");
    if results.is_empty() {
        out.push_str("<p>No cell was tested.</p>\n</section>\n");
        return;
    }
    // One correction for the whole table goes into the header instead of a column.
    let shared = results
        .iter()
        .all(|r| r.correction == results[0].correction)
        .then(|| escape(&results[0].correction));
    let p_adj_head = match &shared {
        Some(c) => format!("p adj. ({c})"),
        None => "p adj.".to_owned(),
    };
    let mut cols = vec![
        ("Condition", false),
        ("Chromophore", false),
        ("Band", false),
        ("ROI", false),
        ("Test", false),
        ("Dyads", true),
        ("Pseudo-pairs", true),
        ("Real mean", true),
        ("Pseudo mean", true),
        ("Excess", true),
        ("Effect size", true),
        ("CI", true),
        ("p", true),
        (p_adj_head.as_str(), true),
    ];
    if shared.is_none() {
        cols.push(("Correction", false));
    }
    cols.push(("Sig.", false));
    out.push_str("<div class=\"scroll\">\n<table>\n");
    out.push_str(&head(&cols));
    out.push_str("<tbody>\n");
    for r in results {
        let correction = if shared.is_none() {
            format!("<td>{}</td>", escape(&r.correction))
        } else {
            String::new()
        };
        let _ = writeln!(
            out,
            "{}<td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td>\
             <td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td>\
             <td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td>\
             <td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td>\
             {correction}{}</tr>",
            row_open(r.significant),
            escape(&r.condition),
            escape(&r.chromophore),
            escape(&r.band),
            escape(&r.roi),
            escape(&r.test),
            r.n_dyads,
            r.n_pseudo,
            num(r.real_mean),
            num(r.pseudo_mean),
            num(r.excess),
            num(r.effect_size),
            interval(r.ci_low, r.ci_high),
            num(r.p),
            num(r.p_adj),
            marker(r.significant),
        );
    }
    out.push_str("</tbody>\n</table>\n</div>\n");
    out.push_str(SIG_LEGEND);
    out.push_str(
        "<p class=\"legend\">Excess: real mean minus pseudo-pair mean. Test \
         <em>re-pairing</em>: observed mean of the real pairs T against its re-pairing \
         distribution T*, effect size (T − mean T*) / SD(T*) (<code>effect_size_kind</code> \
         <code>null_z</code> in results.tsv); <em>dyad-contrast</em>: one-sample t-test on each \
         dyad's real value minus its pseudo-pair mean, effect size Cohen's d<sub>z</sub> \
         (<code>d_z</code>). The two effect sizes are on different scales and are not \
         comparable.</p>\n",
    );
    out.push_str("</section>\n");
}

fn section_contrasts(out: &mut String, contrasts: &[ContrastLine]) {
    out.push_str("<section id=\"contrasts\">\n<h2>Condition contrasts</h2>\n");
    if contrasts.is_empty() {
        out.push_str("<p>No condition contrast was tested.</p>\n</section>\n");
        return;
    }
    out.push_str("<div class=\"scroll\">\n<table>\n");
    out.push_str(&head(&[
        ("Contrast", false),
        ("Chromophore", false),
        ("Band", false),
        ("ROI", false),
        ("Dyads", true),
        ("Mean difference", true),
        ("Effect size", true),
        ("CI", true),
        ("p", true),
        ("p adj.", true),
        ("Sig.", false),
    ]));
    out.push_str("<tbody>\n");
    for c in contrasts {
        let _ = writeln!(
            out,
            "{}<td>{}</td><td>{}</td><td>{}</td><td>{}</td><td class=\"n\">{}</td>\
             <td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td>\
             <td class=\"n\">{}</td><td class=\"n\">{}</td>{}</tr>",
            row_open(c.significant),
            escape(&c.contrast),
            escape(&c.chromophore),
            escape(&c.band),
            escape(&c.roi),
            c.n_dyads,
            num(c.mean_difference),
            num(c.effect_size),
            interval(c.ci_low, c.ci_high),
            num(c.p),
            num(c.p_adj),
            marker(c.significant),
        );
    }
    out.push_str("</tbody>\n</table>\n</div>\n");
    out.push_str(
        "<p class=\"legend\">Mean difference: mean over dyads of the difference between the \
         two conditions' dyad contrasts (paired t-test); effect size Cohen's d<sub>z</sub>; \
         CI: two-sided (1 − α) t interval. Sig., p, p adj. and – as in the results \
         table.</p>\n",
    );
    out.push_str("</section>\n");
}

fn section_cells(out: &mut String, cells: &[CellPlots]) {
    if cells.is_empty() {
        return;
    }
    out.push_str("<section id=\"cells\">\n<h2>Cells with a re-pairing test</h2>\n");
    out.push_str(
        "<p class=\"legend\">One section per cell: the re-pairing null distribution with the \
         observed value, and each dyad's real pair against its pseudo-pairs.</p>\n",
    );
    for (i, cell) in cells.iter().enumerate() {
        cell_section(out, i + 1, cell);
    }
    out.push_str("</section>\n");
}

fn cell_section(out: &mut String, n: usize, cell: &CellPlots) {
    let label = escape(&cell.label);
    let badge = if cell.significant {
        "<span class=\"badge sig\">✓ significant</span>"
    } else {
        "<span class=\"badge\">not significant</span>"
    };
    let _ = writeln!(
        out,
        "<section class=\"cell\" id=\"cell-{n}\">\n<h3><span>Cell {n}: {label}</span>{badge}</h3>"
    );
    out.push_str("<div class=\"figures\">\n");

    let finite: Vec<f64> = cell
        .null
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    let k = finite.len();
    let at_least = finite.iter().filter(|&&v| v >= cell.observed).count();
    let null_mean = if k > 0 {
        finite.iter().sum::<f64>() / k as f64
    } else {
        f64::NAN
    };
    let _ = writeln!(
        out,
        "<figure>\n{}\n<figcaption>Null distribution of T* over {k} re-pairings (mean {}). The \
         vertical line marks the observed mean of the real pairs, T = {}; {at_least} of {k} \
         re-pairings reach it.</figcaption>\n</figure>",
        plots::histogram_svg(&cell.null, cell.observed, &cell.label),
        num(null_mean),
        num(cell.observed),
    );

    let shown: Vec<&(String, f64, f64)> = cell
        .dyads
        .iter()
        .filter(|d| d.1.is_finite() && d.2.is_finite())
        .collect();
    let above = shown.iter().filter(|d| d.1 > d.2).count();
    let missing: Vec<String> = cell
        .dyads
        .iter()
        .filter(|d| !(d.1.is_finite() && d.2.is_finite()))
        .map(|d| escape(&d.0))
        .collect();
    let missing_note = if missing.is_empty() {
        String::new()
    } else {
        format!(" Not shown (a value is missing): {}.", missing.join(", "))
    };
    let _ = writeln!(
        out,
        "<figure>\n{}\n<figcaption>Each point is one dyad: its real-pair value (vertical) \
         against the mean of its members' pseudo-pairs (horizontal). Filled points lie above \
         the dashed line of equality (real pair higher), open points below; {above} of {} \
         dyads lie above.{missing_note}</figcaption>\n</figure>",
        plots::paired_svg(&cell.dyads, &cell.label),
        shown.len(),
    );
    out.push_str("</div>\n</section>\n");
}

fn section_matrix(out: &mut String, m: &MatrixPlot) {
    let count = |s: u8| m.status.iter().filter(|&&x| x == s).count();
    let _ = writeln!(
        out,
        "<section id=\"matrix\">\n<h2>Pairing matrix</h2>\n<figure class=\"wide\">\n{}\n\
         <figcaption>{}: every candidate pair of one row member and one column member, \
         coloured by its synchrony (scale at the right). Outlined squares are the {} real \
         pairs; hatched squares are the {} candidates excluded by a pairing rule, which enter \
         no re-pairing; {} admissible pseudo-pairs. A dot marks a pair without a value.\
         </figcaption>\n</figure>\n</section>",
        plots::heatmap_svg(m),
        escape(&m.label),
        count(2),
        count(0),
        count(1),
    );
}

fn section_warnings(out: &mut String, warnings: &[String]) {
    out.push_str("<section id=\"warnings\">\n<h2>Warnings</h2>\n");
    if warnings.is_empty() {
        out.push_str("<p>None.</p>\n");
    } else {
        out.push_str("<ul class=\"warnings\">\n");
        for w in warnings {
            let _ = writeln!(out, "<li>{}</li>", escape(w));
        }
        out.push_str("</ul>\n");
    }
    out.push_str("</section>\n");
}

#[cfg(test)]
mod tests {
    use super::super::data::{CellPlots, ContrastLine, MatrixPlot, ReportData, ResultLine};
    use super::*;

    fn result(condition: &str, significant: bool) -> ResultLine {
        ResultLine {
            condition: condition.into(),
            chromophore: "hbo".into(),
            band: "slow".into(),
            roi: "prefrontal".into(),
            test: "re-pairing".into(),
            n_dyads: 12,
            n_pseudo: 120,
            real_mean: 0.41234,
            pseudo_mean: 0.35,
            excess: 0.06234,
            effect_size: 0.8,
            ci_low: 0.01,
            ci_high: 0.11,
            p: 0.0021,
            p_adj: 0.0063,
            correction: "holm".into(),
            significant,
        }
    }

    fn sample() -> ReportData {
        ReportData {
            title: "Study <one> & two".into(),
            tool_version: "0.1.0".into(),
            generated_note: "seed 7, 2 threads".into(),
            study_numbers: vec![("dyads".into(), "12".into())],
            rules: vec![("keep_apart:site".into(), 4)],
            pairing_counts: vec![("admissible".into(), "120".into())],
            methods: "Methods with <b>tags</b> & more.".into(),
            results: vec![result("a&b\"c", true), result("rest", false)],
            contrasts: vec![ContrastLine {
                contrast: "task-rest".into(),
                chromophore: "hbo".into(),
                band: "slow".into(),
                roi: "prefrontal".into(),
                n_dyads: 12,
                mean_difference: 0.03,
                effect_size: 0.4,
                ci_low: f64::NAN,
                ci_high: f64::NAN,
                p: 0.2,
                p_adj: 0.4,
                significant: false,
            }],
            cells: vec![CellPlots {
                label: "joint · hbo · a&b\"c · prefrontal".into(),
                significant: true,
                observed: 0.41,
                null: (0..200).map(|i| 0.3 + f64::from(i % 17) * 0.005).collect(),
                dyads: vec![
                    ("<script>alert(1)</script>".into(), 0.5, 0.3),
                    ("d2".into(), 0.2, f64::NAN),
                ],
            }],
            matrix: Some(MatrixPlot {
                label: "a&b\"c".into(),
                row_labels: vec!["<script>alert(1)</script>".into(), "m2".into()],
                col_labels: vec!["p1".into(), "p2".into()],
                values: ndarray::Array2::from_shape_vec((2, 2), vec![0.5, 0.3, f64::NAN, 0.6])
                    .unwrap(),
                status: ndarray::Array2::from_shape_vec((2, 2), vec![2, 1, 0, 2]).unwrap(),
            }),
            warnings: vec!["block 2 of \"a&b\" shortened <here>".into()],
        }
    }

    // Source: HTML Living Standard, §13.1 (text and attribute values must not contain a raw
    // `<` or an unescaped `&` that starts a character reference) — the escapes are fixed by
    // the standard, not by this code.
    #[test]
    fn user_labels_are_escaped_everywhere() {
        let page = render(&sample());
        assert!(
            !page.to_lowercase().contains("<script"),
            "raw script tag in page"
        );
        assert!(page.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        assert!(page.contains("a&amp;b&quot;c"));
        assert!(!page.contains("a&b\"c"));
        assert!(page.contains("Study &lt;one&gt; &amp; two"));
        assert!(page.contains("Methods with &lt;b&gt;tags&lt;/b&gt; &amp; more."));
        assert!(page.contains("block 2 of &quot;a&amp;b&quot; shortened &lt;here&gt;"));
        // Inside the SVG figures as well (escaped once by the backend, not twice).
        assert!(!page.contains("&amp;lt;"));
        assert!(!page.contains("&amp;amp;"));
    }

    #[test]
    fn page_is_self_contained_and_deterministic() {
        let data = sample();
        let page = render(&data);
        assert_eq!(page, render(&data));
        for forbidden in [
            "<script", "<link", "<img", "<iframe", "src=", "url(", "@import",
        ] {
            assert!(!page.contains(forbidden), "{forbidden}");
        }
        // The only absolute address allowed is the SVG namespace name, which is not fetched.
        let http = page.matches("http").count();
        let ns = page.matches("http://www.w3.org/2000/svg").count();
        assert_eq!(http, ns);
        assert!(page.contains("@media print"));
    }

    #[test]
    fn sections_and_markers_are_present() {
        let page = render(&sample());
        assert!(page.contains("<p id=\"methods\">"));
        assert!(page.contains("id=\"cell-1\""));
        assert_eq!(page.matches("class=\"cell\"").count(), 1);
        assert_eq!(page.matches("<tr class=\"sig\">").count(), 1);
        assert_eq!(page.matches("<td class=\"mark\">✓ yes</td>").count(), 1);
        assert!(page.contains("✓ significant"));
        // One histogram + one paired plot + the matrix.
        assert_eq!(page.matches("<svg").count(), 3);
        assert!(page.contains("not a clinical or diagnostic instrument"));
        // Missing value listed in the caption rather than silently dropped.
        assert!(page.contains("Not shown (a value is missing): d2."));
        // Contrast with a NaN interval shows the placeholder.
        assert!(page.contains("<td class=\"n\">–</td>"));
    }

    #[test]
    fn shared_correction_moves_into_the_header() {
        let mut d = sample();
        let page = render(&d);
        assert!(page.contains("p adj. (holm)"));
        assert!(!page.contains(">Correction<"));
        d.results[1].correction = "bh".into();
        let page = render(&d);
        assert!(page.contains(">Correction<") && page.contains("<td>bh</td>"));
    }

    // Expected strings written by hand from the rule "three significant digits".
    #[test]
    fn numbers_are_compact() {
        let cases = [
            (f64::NAN, "–"),
            (0.0, "0"),
            (-0.0, "0"),
            (1.0, "1"),
            (0.41234, "0.412"),
            (0.05, "0.05"),
            (12.345, "12.3"),
            (-4.56789, "-4.57"),
            (999.7, "1000"),
            (12345.6, "12346"),
            (0.0012345, "0.00123"),
            (0.000_099_99, "1e-4"),
            (0.000_123_4, "1.23e-4"),
            (2.5e7, "2.5e7"),
            (f64::INFINITY, "∞"),
            (-0.0004, "-4e-4"),
        ];
        for (x, want) in cases {
            assert_eq!(num(x), want, "{x}");
        }
        assert_eq!(interval(0.1, 0.25), "[0.1, 0.25]");
    }

    #[test]
    fn empty_report_still_renders() {
        let mut d = sample();
        d.results.clear();
        d.contrasts.clear();
        d.cells.clear();
        d.matrix = None;
        d.warnings.clear();
        d.rules.clear();
        let page = render(&d);
        assert!(page.contains("No cell was tested."));
        assert!(page.contains("No condition contrast was tested."));
        assert!(!page.contains("<svg"));
        assert!(page.ends_with("</html>\n"));
    }
}
