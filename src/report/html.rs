//! The HTML report (`--html FILE`): one self-contained page with inline CSS and inline
//! SVG, no script and no network fetch, so it can be attached to a review or opened
//! offline years later and look the same.
//!
//! The page has five parts, in reading order: a summary band (verdict counts, gate,
//! settings, inputs with their SHA-256), the held-out interval chart, the chart of what
//! the training data alone guarantee, the per-run table with the findings in words,
//! and the cautions.
//!
//! Every text that comes from the input (run names, sources, paths, family keys,
//! held-out split names, finding messages, column names) goes through
//! [`escape_html`]. Chart labels are the one exception: plotters escapes the text it
//! writes into the SVG itself, so they are handed over unescaped (escaping twice would
//! show `&lt;` to the reader); the tests check that hostile names come out inert.
//!
//! Large audits: the page lists at most [`TABLE_LIMIT`] runs and charts at most
//! [`CHART_ROWS_LIMIT`] intervals and [`CHART_POINTS_LIMIT`] theory points, worst
//! first, and says so; the JSON, CSV and Parquet outputs carry every run.

use std::collections::BTreeMap;
use std::io::{self, Write};

use super::charts::{self, IntervalRow, TheoryCurve, TheoryPoint};
use super::document::AuditDocument;
use super::escape::escape_html;
use super::text::{group_thousands, percent, sorted_worst_first, summary_line};
use crate::audit::{Gate, GateResult, HoldoutBound, RunResult, Verdict};
use crate::theory::growth::Family;
use crate::theory::vc;

/// Most runs listed in the table.
pub const TABLE_LIMIT: usize = 2000;
/// Most rows of the interval chart.
pub const CHART_ROWS_LIMIT: usize = 60;
/// Most run markers on the theory chart.
pub const CHART_POINTS_LIMIT: usize = 5000;
/// Most Sauer-bound curves on the theory chart.
pub const CURVES_LIMIT: usize = 10;
/// Most skipped rows or files listed by name.
const SKIPPED_LIMIT: usize = 200;
/// Columns of the run table.
const TABLE_COLUMNS: usize = 9;
/// Samples per theory curve.
const CURVE_SAMPLES: usize = 96;

const STYLE: &str = r#"
:root { --ink: #1d1f23; --muted: #5b616b; --line: #d9dce1; --paper: #ffffff; --band: #f4f5f7;
  --certified: #1e7b4a; --certified-fill: #8fd1a8; --unproven: #a86b00; --refuted: #b02418;
  --refuted-fill: #f6d5d1; --no-claim: #808080; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 15px/1.45 system-ui, -apple-system, "Segoe UI", "DejaVu Sans", "Liberation Sans", Arial, sans-serif; }
main { max-width: 1240px; margin: 0 auto; padding: 24px 28px 48px; }
h1 { font-size: 26px; margin: 0 0 4px; }
h2 { font-size: 20px; margin: 36px 0 8px; padding-bottom: 4px; border-bottom: 2px solid var(--line); }
h3 { font-size: 16px; margin: 18px 0 6px; }
.meta, figcaption, .note { color: var(--muted); }
figcaption { font-size: 14px; max-width: 70em; margin-top: 6px; }
code, .mono { font-family: "DejaVu Sans Mono", "Liberation Mono", Menlo, Consolas, monospace; font-size: 13px; }
.band { background: var(--band); border: 1px solid var(--line); border-radius: 8px; padding: 16px 20px; margin-top: 16px; }
.gate { display: inline-block; font-weight: 700; font-size: 18px; padding: 6px 14px; border-radius: 6px; border: 2px solid; }
.gate.pass { color: var(--certified); border-color: var(--certified); background: #e9f6ee; }
.gate.fail { color: var(--refuted); border-color: var(--refuted); background: #fbeceb; }
.tiles { display: flex; flex-wrap: wrap; gap: 12px; margin: 14px 0; }
.tile { background: var(--paper); border: 1px solid var(--line); border-radius: 6px; padding: 8px 14px; min-width: 130px; }
.tile .count { font-size: 26px; font-weight: 700; display: block; }
.tile .what { color: var(--muted); font-size: 13px; }
.swatch { display: inline-block; width: 30px; height: 12px; vertical-align: middle; margin-right: 6px; }
.swatch.certified { background: var(--certified-fill); border: 1px solid var(--certified); }
.swatch.unproven { background: #fff; border: 2px solid var(--unproven); }
.swatch.refuted { border: 1px solid var(--refuted);
  background: repeating-linear-gradient(135deg, var(--refuted) 0 1px, var(--refuted-fill) 1px 5px); }
.swatch.no_claim { height: 6px; background: var(--no-claim); }
dl.settings { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 8px 0; }
dl.settings dt { color: var(--muted); }
dl.settings dd { margin: 0; }
table { border-collapse: collapse; width: 100%; font-size: 13.5px; }
th, td { border-bottom: 1px solid var(--line); padding: 5px 7px; text-align: left; vertical-align: top; }
th { background: var(--band); position: sticky; top: 0; }
td.num, th.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
.wide { overflow-x: auto; }
.hash { word-break: break-all; }
.verdict { display: inline-block; font-weight: 700; font-size: 12px; padding: 1px 7px; border-radius: 4px;
  border: 1.5px solid; white-space: nowrap; }
.verdict.certified { color: var(--certified); border-color: var(--certified); background: #e9f6ee; }
.verdict.unproven { color: var(--unproven); border-color: var(--unproven); background: #fff; border-style: dashed; }
.verdict.refuted { color: #fff; border-color: var(--refuted); background: var(--refuted); }
.verdict.no_claim { color: var(--no-claim); border-color: var(--line); background: #fff; }
.sub { display: block; color: var(--muted); font-size: 12px; font-weight: normal; }
td.run { min-width: 12em; overflow-wrap: anywhere; }
tr.has-findings td { border-bottom: none; }
tr.findings td { padding-top: 0; }
ul.findings { margin: 0; padding-left: 16px; color: var(--ink); }
ul.findings li { margin: 0 0 3px; }
figure { margin: 10px 0; }
figure svg { display: block; width: 100%; height: auto; max-width: 1100px; border: 1px solid var(--line); border-radius: 6px; }
div.wear { display: grid; grid-template-columns: repeat(auto-fill, minmax(520px, 1fr)); gap: 12px; }
figure.wear { margin: 0; }
.cautions { border-left: 4px solid var(--unproven); background: #fff8ea; padding: 10px 18px; }
footer { margin-top: 40px; color: var(--muted); font-size: 13px; }
@media print { th { position: static; } .band { break-inside: avoid; } }
"#;

/// Writes the HTML report of `doc`.
pub fn write_html(doc: &AuditDocument, out: &mut dyn Write) -> io::Result<()> {
    let page = render_page(doc)?;
    out.write_all(page.as_bytes())
}

fn render_page(doc: &AuditDocument) -> io::Result<String> {
    let sorted = sorted_worst_first(&doc.runs);
    let mut page = String::with_capacity(64 * 1024 + doc.runs.len().min(TABLE_LIMIT) * 800);
    page.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    page.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
    page.push_str("<meta name=\"color-scheme\" content=\"light\">\n");
    page.push_str(&format!(
        "<title>Accuracy-claim audit: {} runs, gate {}</title>\n",
        doc.summary.runs,
        gate_word(doc.summary.gate)
    ));
    page.push_str(&format!(
        "<style>{STYLE}</style>\n</head>\n<body>\n<main>\n"
    ));

    summary_band(doc, &mut page);
    claims_section(doc, &mut page)?;
    interval_section(doc, &sorted, &mut page)?;
    theory_section(doc, &sorted, &mut page)?;
    table_section(doc, &sorted, &mut page);
    splits_section(doc, &mut page)?;
    cautions_section(doc, &mut page);

    page.push_str(&format!(
        "<footer>Written by {} {}. This page is self-contained: it loads no script, font, style sheet or image from anywhere.</footer>\n",
        escape_html(&doc.tool.name),
        escape_html(&doc.tool.version)
    ));
    page.push_str("</main>\n</body>\n</html>\n");
    Ok(page)
}

fn gate_word(gate: GateResult) -> &'static str {
    match gate {
        GateResult::Pass => "PASS",
        GateResult::Fail => "FAIL",
    }
}

fn verdict_class(verdict: Verdict) -> &'static str {
    verdict.as_str()
}

/// A run's verdict badge: its own, or for a run without a claim of its own that of
/// the strictest claims-file claim about it alone, naming the claim.
fn run_verdict_badge(doc: &AuditDocument, run: &RunResult) -> String {
    let (verdict, words) = super::text::verdict_text(run, &doc.claims);
    if verdict == run.verdict {
        verdict_badge(verdict)
    } else {
        let claim = words
            .strip_prefix(verdict.as_str())
            .unwrap_or_default()
            .trim();
        format!("{} {}", verdict_badge(verdict), escape_html(claim))
    }
}

fn verdict_badge(verdict: Verdict) -> String {
    format!(
        "<span class=\"verdict {}\">{}</span>",
        verdict_class(verdict),
        charts::verdict_words(verdict)
    )
}

fn method_name(bound: HoldoutBound) -> &'static str {
    match bound {
        HoldoutBound::Binomial => "exact binomial (Clopper–Pearson)",
        HoldoutBound::Hoeffding => "Hoeffding",
    }
}

fn chosen_interval(doc: &AuditDocument, run: &RunResult) -> [f64; 2] {
    match doc.settings.holdout_bound {
        HoldoutBound::Binomial => run.binomial_interval,
        HoldoutBound::Hoeffding => run.hoeffding_interval,
    }
}

/// Why the gate passed or failed, naming every reason it failed for: claims not
/// certified (or refuted), findings that suggest a slip, rows with a claim that
/// could not be read.
fn gate_explanation(doc: &AuditDocument) -> String {
    let s = &doc.summary;
    match (doc.settings.gate, s.gate) {
        (Gate::Unproven, GateResult::Pass) => "every claim in these logs is certified".to_string(),
        (Gate::Refuted, GateResult::Pass) => {
            "no claim is refuted (unproven claims are allowed by this gate)".to_string()
        }
        (Gate::Never, _) => "this gate never fails; the verdicts are for information".to_string(),
        (gate, GateResult::Fail) => {
            let mut reasons = Vec::new();
            let refuted = s.refuted + s.claims_refuted;
            let unproven = s.unproven + s.claims_unproven;
            if gate == Gate::Unproven && refuted + unproven > 0 {
                reasons.push("at least one claim is not certified".to_string());
            } else if refuted > 0 {
                reasons.push("at least one claim is refuted".to_string());
            }
            let slips = s.gate_findings + s.claim_gate_findings;
            if slips > 0 {
                reasons.push(format!(
                    "{} {} a finding that suggests a slip (see the findings; --gate-allow CODE if intended)",
                    group_thousands(slips as u64),
                    if slips == 1 { "claim has" } else { "claims have" }
                ));
            }
            if s.claims_skipped > 0 {
                reasons.push(format!(
                    "{} skipped {} carried a claim that could not be audited",
                    group_thousands(s.claims_skipped as u64),
                    if s.claims_skipped == 1 { "row" } else { "rows" }
                ));
            }
            if reasons.is_empty() {
                reasons.push("the gate failed".to_string());
            }
            if gate == Gate::Unproven && refuted + unproven == 0 {
                format!("every claim is certified, but {}", reasons.join("; "))
            } else {
                reasons.join("; ")
            }
        }
    }
}

fn summary_band(doc: &AuditDocument, page: &mut String) {
    let s = &doc.summary;
    let settings = &doc.settings;
    page.push_str("<header>\n<h1>Accuracy-claim audit</h1>\n");
    page.push_str(&format!(
        "<p class=\"meta\">{} {} · generated {} · confidence {} {}</p>\n</header>\n",
        escape_html(&doc.tool.name),
        escape_html(&doc.tool.version),
        escape_html(&doc.generated_at),
        settings.confidence,
        if settings.familywise {
            "for all claims at once (family-wise)"
        } else {
            "for each claim separately"
        }
    ));

    page.push_str("<section class=\"band\" aria-label=\"Summary\">\n");
    let gate_class = match s.gate {
        GateResult::Pass => "pass",
        GateResult::Fail => "fail",
    };
    page.push_str(&format!(
        "<p><span class=\"gate {gate_class}\">Gate ({}): {}</span> &nbsp;{}.</p>\n",
        settings.gate.as_str(),
        gate_word(s.gate),
        escape_html(&gate_explanation(doc))
    ));
    page.push_str("<div class=\"tiles\">\n");
    page.push_str(&format!(
        "<div class=\"tile\"><span class=\"count\">{}</span><span class=\"what\">runs audited</span></div>\n",
        group_thousands(s.runs as u64)
    ));
    for (verdict, count) in [
        (Verdict::Certified, s.certified),
        (Verdict::Unproven, s.unproven),
        (Verdict::Refuted, s.refuted),
        (Verdict::NoClaim, s.no_claim),
    ] {
        page.push_str(&format!(
            "<div class=\"tile\"><span class=\"count\">{}</span><span class=\"what\"><span class=\"swatch {}\"></span>{}</span></div>\n",
            group_thousands(count as u64),
            verdict_class(verdict),
            charts::verdict_words(verdict)
        ));
    }
    page.push_str("</div>\n");
    page.push_str(&format!("<p>{}</p>\n", escape_html(&summary_line(doc))));

    page.push_str("<h3>Settings</h3>\n<dl class=\"settings\">\n");
    let mut setting = |name: &str, value: String| {
        page.push_str(&format!("<dt>{name}</dt><dd>{value}</dd>\n"));
    };
    setting(
        "confidence",
        format!(
            "{} (δ = {:.4})",
            settings.confidence,
            crate::decimal::complement(settings.confidence)
        ),
    );
    setting(
        "held-out bound deciding verdicts",
        method_name(settings.holdout_bound).to_string(),
    );
    setting(
        "family-wise (Bonferroni over claims)",
        yes_no(settings.familywise).to_string(),
    );
    setting(
        "all rows share one held-out split",
        yes_no(settings.same_holdout).to_string(),
    );
    setting(
        "training tolerance for Ω",
        format!("{}", settings.tolerance),
    );
    setting("widest acceptable interval", percent(settings.max_width));
    setting(
        "rates given in percent",
        yes_no(settings.percent).to_string(),
    );
    setting(
        "bad rows skipped (lenient)",
        yes_no(settings.lenient).to_string(),
    );
    setting(
        "claimed accuracy for rows without one",
        settings
            .claim_accuracy
            .map(percent)
            .unwrap_or_else(|| "none".to_string()),
    );
    if !settings.column_map.is_empty() {
        let pairs: Vec<String> = settings
            .column_map
            .iter()
            .map(|(canonical, theirs)| {
                format!(
                    "<code>{}</code> ← <code>{}</code>",
                    escape_html(canonical),
                    escape_html(theirs)
                )
            })
            .collect();
        setting("column names mapped", pairs.join(", "));
    }
    page.push_str("</dl>\n");

    page.push_str("<h3>Inputs</h3>\n");
    if doc.inputs.is_empty() {
        page.push_str("<p class=\"note\">No input files were recorded.</p>\n");
    } else {
        page.push_str("<div class=\"wide\"><table>\n<thead><tr><th>file</th><th class=\"num\">rows</th><th class=\"num\">bytes</th><th>SHA-256</th></tr></thead>\n<tbody>\n");
        let claim_files = doc.claim_files.iter().map(|f| (f, " (claims)"));
        for (input, role) in doc.inputs.iter().map(|f| (f, "")).chain(claim_files) {
            page.push_str(&format!(
                "<tr><td class=\"mono\">{}{role}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"mono hash\">{}</td></tr>\n",
                escape_html(&input.path),
                group_thousands(input.rows as u64),
                group_thousands(input.size),
                escape_html(&input.sha256)
            ));
        }
        page.push_str("</tbody></table></div>\n");
    }
    if !doc.skipped_files.is_empty() {
        page.push_str(&format!(
            "<h3>Files skipped ({})</h3>\n<ul>\n",
            group_thousands(doc.skipped_files.len() as u64)
        ));
        for skipped in doc.skipped_files.iter().take(SKIPPED_LIMIT) {
            page.push_str(&format!(
                "<li><span class=\"mono\">{}</span>: {}</li>\n",
                escape_html(&skipped.path),
                escape_html(&skipped.reason)
            ));
        }
        if doc.skipped_files.len() > SKIPPED_LIMIT {
            page.push_str(&format!(
                "<li>… and {} more</li>\n",
                doc.skipped_files.len() - SKIPPED_LIMIT
            ));
        }
        page.push_str("</ul>\n");
    }
    if !doc.skipped_rows.is_empty() {
        page.push_str(&format!(
            "<h3>Rows skipped ({})</h3>\n<ul>\n",
            group_thousands(doc.skipped_rows.len() as u64)
        ));
        for skipped in doc.skipped_rows.iter().take(SKIPPED_LIMIT) {
            page.push_str(&format!(
                "<li><span class=\"mono\">{}</span>: {}</li>\n",
                escape_html(&skipped.source),
                escape_html(&skipped.reasons.join("; "))
            ));
        }
        if doc.skipped_rows.len() > SKIPPED_LIMIT {
            page.push_str(&format!(
                "<li>… and {} more</li>\n",
                doc.skipped_rows.len() - SKIPPED_LIMIT
            ));
        }
        page.push_str("</ul>\n");
    }
    page.push_str("</section>\n");
}

fn yes_no(value: bool) -> &'static str {
    if value {
        "yes"
    } else {
        "no"
    }
}

/// The claims of the claims files, first: the chart of each claim's bounds against
/// what it needs, then a table with the statement, the verdict and the evidence.
fn claims_section(doc: &AuditDocument, page: &mut String) -> io::Result<()> {
    if doc.claims.is_empty() {
        return Ok(());
    }
    let claims = super::claims::claims_worst_first(&doc.claims);
    page.push_str("<section>\n<h2>Claims under review</h2>\n");
    let rows: Vec<charts::ClaimRow> = claims
        .iter()
        .take(CHART_ROWS_LIMIT)
        .map(|c| charts::ClaimRow {
            label: c.claim.clone(),
            verdict: c.verdict,
            lower: c.lower,
            upper: c.upper,
            threshold: c.threshold,
        })
        .collect();
    let svg = charts::claims_chart_svg(&rows)?;
    page.push_str("<figure>\n");
    page.push_str(&charts::inline_svg(
        &svg,
        "Bounds on each claim's quantity against what the claim needs",
    ));
    page.push_str("<figcaption>One row per claim. The bar spans the bounds on the claimed quantity (the true error for accuracy and error claims, its gap to the training error for gap claims, Δ = E_run − E_base for comparisons); the mark is what the claim needs the quantity to be at most. Certified: the whole bar lies left of the mark; refuted: the whole bar lies right of it.</figcaption>\n</figure>\n");
    page.push_str("<div class=\"wide\"><table class=\"claims\">\n<thead><tr><th>verdict</th><th>claim</th><th>statement</th><th>kind</th><th class=\"num\">needs</th><th class=\"num\">bounds</th><th>method</th></tr></thead>\n<tbody>\n");
    for c in &claims {
        page.push_str(&format!(
            "<tr class=\"has-findings\"><td>{}</td><td class=\"run\">{}<span class=\"sub\">{}</span></td><td>{}</td><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{} – {}</td><td>{}</td></tr>\n",
            verdict_badge(c.verdict),
            escape_html(&c.claim),
            escape_html(&c.source),
            escape_html(c.statement.as_deref().unwrap_or("")),
            escape_html(c.kind.as_str()),
            escape_html(&super::claims::claim_target(c)),
            percent(c.lower),
            percent(c.upper),
            escape_html(c.method.as_str()),
        ));
        page.push_str(&format!(
            "<tr class=\"findings\"><td></td><td colspan=\"6\"><ul class=\"findings\"><li class=\"why\">{}</li></ul></td></tr>\n",
            escape_html(&c.evidence)
        ));
    }
    page.push_str("</tbody></table></div>\n</section>\n");
    Ok(())
}

fn interval_section(
    doc: &AuditDocument,
    sorted: &[&RunResult],
    page: &mut String,
) -> io::Result<()> {
    page.push_str("<section>\n<h2>Held-out evidence, run by run</h2>\n");
    if sorted.is_empty() {
        page.push_str("<p class=\"note\">No runs were audited.</p>\n</section>\n");
        return Ok(());
    }
    let rows: Vec<IntervalRow> = sorted
        .iter()
        .take(CHART_ROWS_LIMIT)
        .map(|run| IntervalRow {
            label: run.run.clone(),
            verdict: run.verdict,
            interval: chosen_interval(doc, run),
            observed: run.holdout_error_rate,
            claim: run.claim_error_rate,
            train: run.train_error_rate,
        })
        .collect();
    let method = match doc.settings.holdout_bound {
        HoldoutBound::Binomial => "binomial",
        HoldoutBound::Hoeffding => "Hoeffding",
    };
    let svg = charts::interval_chart_svg(&rows, method)?;
    page.push_str("<figure>\n");
    page.push_str(&charts::inline_svg(
        &svg,
        "Held-out error intervals per run, with claimed and training error",
    ));
    let shown = if sorted.len() > CHART_ROWS_LIMIT {
        format!(
            " The {} worst of {} runs are shown; the table below and the JSON output list more.",
            CHART_ROWS_LIMIT,
            group_thousands(sorted.len() as u64)
        )
    } else {
        String::new()
    };
    page.push_str(&format!(
        "<figcaption>Runs worst first. Each bar is the run's two-sided {} interval for its true error rate, at confidence 1 − δ/K, where K counts the models compared on the same held-out split. \
A claim is certified when the one-sided upper bound (not drawn; it lies inside the bar) is at most the claimed error, and refuted when the one-sided lower bound exceeds it. \
A training error far below the bar is the usual sign of overfitting; one far above it points at a split or logging problem.{}</figcaption>\n",
        method_name(doc.settings.holdout_bound),
        shown
    ));
    page.push_str("</figure>\n</section>\n");
    Ok(())
}

/// The δ a run's VC allowance was computed at: the audit's δ after the family-wise
/// division, which is the run's per-bound δ times its K (SPEC §4: Ω uses δ, not δ/K).
fn theory_delta(run: &RunResult) -> f64 {
    run.delta * run.candidates.max(1) as f64
}

fn theory_section(doc: &AuditDocument, sorted: &[&RunResult], page: &mut String) -> io::Result<()> {
    page.push_str("<section>\n<h2>What the training data alone guarantee</h2>\n");
    let with_theory: Vec<&RunResult> = sorted
        .iter()
        .copied()
        .filter(|run| {
            run.train_n.is_some_and(|n| n > 0)
                && run
                    .vc_allowance
                    .is_some_and(|omega| omega > 0.0 && omega.is_finite())
        })
        .collect();
    if with_theory.is_empty() {
        page.push_str("<p class=\"note\">No run names a model family with a growth bound together with its training size and training error, so there is no VC allowance to draw.</p>\n</section>\n");
        return Ok(());
    }

    // Curves: one per (family key, d_VC), most runs first, at most CURVES_LIMIT.
    let mut groups: BTreeMap<(String, u64), (usize, f64)> = BTreeMap::new();
    for run in &with_theory {
        if let (Some(key), Some(d)) = (&run.family, run.vc_dim) {
            let entry = groups
                .entry((key.clone(), d))
                .or_insert((0, theory_delta(run)));
            entry.0 += 1;
        }
    }
    let mut ordered: Vec<((String, u64), (usize, f64))> = groups.into_iter().collect();
    ordered.sort_by(|a, b| b.1 .0.cmp(&a.1 .0).then_with(|| a.0.cmp(&b.0)));
    let omitted_curves = ordered.len().saturating_sub(CURVES_LIMIT);
    ordered.truncate(CURVES_LIMIT);

    let min_n = with_theory
        .iter()
        .filter_map(|r| r.train_n)
        .min()
        .unwrap_or(100);
    let max_n = with_theory
        .iter()
        .filter_map(|r| r.train_n)
        .max()
        .unwrap_or(1_000_000_000);
    let (x_lo, x_hi) = charts::decade_range((min_n as f64).min(1e2), (max_n as f64).max(1e9));

    let curves: Vec<TheoryCurve> = ordered
        .iter()
        .map(|((key, d), (_, delta))| {
            let family = Family::Vc { vc_dim: *d };
            let points = (0..CURVE_SAMPLES)
                .filter_map(|i| {
                    let t = i as f64 / (CURVE_SAMPLES - 1) as f64;
                    let n = (x_lo.ln() + t * (x_hi.ln() - x_lo.ln())).exp().round();
                    let n = n.clamp(1.0, (u64::MAX / 4) as f64) as u64;
                    let omega = vc::allowance(&family, n, *delta);
                    (omega > 0.0 && omega.is_finite()).then_some((n as f64, omega))
                })
                .collect();
            TheoryCurve {
                label: format!(
                    "Sauer bound, d_VC = {d} ({})",
                    charts::truncate_chars(key, 24)
                ),
                points,
            }
        })
        .collect();

    let mut family_keys: Vec<String> = Vec::new();
    let mut points = Vec::new();
    for run in with_theory.iter().take(CHART_POINTS_LIMIT) {
        let key = run
            .family
            .clone()
            .unwrap_or_else(|| "(no family)".to_string());
        let family = match family_keys.iter().position(|k| *k == key) {
            Some(index) => index,
            None => {
                family_keys.push(key.clone());
                family_keys.len() - 1
            }
        };
        let curve = run.vc_dim.and_then(|d| {
            ordered
                .iter()
                .position(|((k, dd), _)| *k == key && *dd == d)
        });
        points.push(TheoryPoint {
            train_n: run.train_n.unwrap_or(1) as f64,
            allowance: run.vc_allowance.unwrap_or(1.0),
            curve,
            family,
        });
    }

    let svg = charts::theory_chart_svg(
        &curves,
        &points,
        &family_keys,
        (x_lo, x_hi),
        doc.settings.tolerance,
    )?;
    page.push_str("<figure>\n");
    page.push_str(&charts::inline_svg(
        &svg,
        "VC allowance against the number of training examples",
    ));
    let mut caption = format!(
        "The allowance Ω(N) = √((8/N)·ln(4·m<sub>H</sub>(2N)/δ)) bounds how far the true error can exceed the training error, with probability at least 1 − δ (Vapnik &amp; Chervonenkis 1971). \
Each marker is one run: its own Ω at its own training size N, computed from its family's growth function; the marker's shape names the family and its color matches the curve of the same family and VC dimension. \
Each curve is the Sauer–Shelah bound m<sub>H</sub>(N) ≤ Σ<sub>i≤d</sub> C(N, i) for d = the run's VC dimension, an upper envelope of that family's own growth function, so a run's marker lies on its curve or below it (below for families such as <code>linear</code> or <code>finite</code>, whose growth is smaller than the Sauer sum). \
Families without a VC dimension (such as <code>tree</code> or <code>stump</code>) appear as grey markers without a curve. Where a curve crosses the tolerance line ({}) is roughly how much training data that model size needs before its training error says anything useful.",
        doc.settings.tolerance
    );
    if omitted_curves > 0 {
        caption.push_str(&format!(
            " {omitted_curves} further (family, VC dimension) pair(s) have markers but no curve, to keep the chart legible."
        ));
    }
    if with_theory.len() > CHART_POINTS_LIMIT {
        caption.push_str(&format!(
            " The markers show the {} worst of {} runs with a VC allowance.",
            CHART_POINTS_LIMIT,
            group_thousands(with_theory.len() as u64)
        ));
    }
    page.push_str(&format!(
        "<figcaption>{caption}</figcaption>\n</figure>\n</section>\n"
    ));
    Ok(())
}

fn table_section(doc: &AuditDocument, sorted: &[&RunResult], page: &mut String) {
    page.push_str("<section>\n<h2>Runs, worst first</h2>\n");
    if sorted.is_empty() {
        page.push_str("<p class=\"note\">No runs were audited.</p>\n</section>\n");
        return;
    }
    if sorted.len() > TABLE_LIMIT {
        page.push_str(&format!(
            "<p class=\"note\">The {} worst of {} runs are listed; the JSON, CSV and Parquet outputs carry every run.</p>\n",
            group_thousands(TABLE_LIMIT as u64),
            group_thousands(sorted.len() as u64)
        ));
    }
    let method = match doc.settings.holdout_bound {
        HoldoutBound::Binomial => "binomial",
        HoldoutBound::Hoeffding => "Hoeffding",
    };
    let interval_heading = format!("{method} interval<span class=\"sub\">one-sided L / U</span>");
    let headings: [(&str, bool); TABLE_COLUMNS] = [
        ("verdict", false),
        ("run", false),
        ("family", false),
        (
            "held-out error<span class=\"sub\">errors / examples</span>",
            true,
        ),
        (&interval_heading, true),
        ("claimed error", true),
        ("training error", true),
        (
            "VC allowance Ω<span class=\"sub\">bound on true error</span>",
            true,
        ),
        ("needed: held-out<span class=\"sub\">training</span>", true),
    ];
    page.push_str("<div class=\"wide\"><table class=\"runs\">\n<thead><tr>");
    for (heading, numeric) in headings {
        page.push_str(&format!(
            "<th{}>{}</th>",
            if numeric { " class=\"num\"" } else { "" },
            heading
        ));
    }
    page.push_str("</tr></thead>\n<tbody>\n");
    for run in sorted.iter().take(TABLE_LIMIT) {
        page.push_str(&run_rows(doc, run));
    }
    page.push_str("</tbody></table></div>\n");
    page.push_str(&format!(
        "<p class=\"note\">L and U are the one-sided {} bounds at level δ/K that decide the verdict; the interval is two-sided. \
\"Needed\" is the held-out size that would certify the claim at the same observed error rate, and the training size at which Ω falls to the tolerance {}. {}</p>\n",
        method_name(doc.settings.holdout_bound),
        doc.settings.tolerance,
        optional_note(doc)
    ));
    page.push_str("</section>\n");
}

/// One run's table row, plus a full-width row with its findings in words.
fn run_rows(doc: &AuditDocument, run: &RunResult) -> String {
    let interval = chosen_interval(doc, run);
    let family = match (&run.family, run.vc_dim) {
        (Some(key), Some(d)) => format!(
            "{}<span class=\"sub\">d_VC&nbsp;{}</span>",
            escape_html(key),
            group_thousands(d)
        ),
        (Some(key), None) => escape_html(key),
        (None, _) => "—".to_string(),
    };
    let split = match &run.holdout_set {
        Some(set) => format!("split {} · ", escape_html(set)),
        None => String::new(),
    };
    let claim = match run.claim_error_rate {
        Some(c) => format!(
            "{}<span class=\"sub\">accuracy ≥ {}</span>",
            percent(c),
            percent(crate::decimal::complement(c))
        ),
        None => "—".to_string(),
    };
    let training = match (run.train_error_rate, run.train_n) {
        (Some(rate), Some(n)) => format!(
            "{}<span class=\"sub\">N = {}</span>",
            percent(rate),
            group_thousands(n)
        ),
        (Some(rate), None) => percent(rate),
        (None, Some(n)) => format!("—<span class=\"sub\">N = {}</span>", group_thousands(n)),
        (None, None) => "—".to_string(),
    };
    let theory = match (run.vc_allowance, run.vc_bound) {
        (Some(omega), Some(bound)) => {
            format!("{omega:.4}<span class=\"sub\">≤ {}</span>", percent(bound))
        }
        (Some(omega), None) => format!("{omega:.4}"),
        _ => "—".to_string(),
    };
    let needed = format!(
        "{}<span class=\"sub\">{}</span>",
        run.holdout_needed
            .map(group_thousands)
            .unwrap_or_else(|| "—".to_string()),
        run.train_needed
            .map(group_thousands)
            .unwrap_or_else(|| "—".to_string())
    );
    let mut rows = format!(
        "<tr{}><td>{}</td><td class=\"run\">{}<span class=\"sub\">{}{} · K&nbsp;=&nbsp;{}</span></td><td>{}</td>\
<td class=\"num\">{}<span class=\"sub\">{} / {}</span></td>\
<td class=\"num\">{} – {}<span class=\"sub\">{} / {}</span></td>\
<td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td></tr>\n",
        " class=\"has-findings\"",
        run_verdict_badge(doc, run),
        escape_html(&run.run),
        split,
        escape_html(&run.source),
        group_thousands(run.candidates),
        family,
        percent(run.holdout_error_rate),
        group_thousands(run.holdout_misclassified),
        group_thousands(run.holdout_n),
        percent(interval[0]),
        percent(interval[1]),
        percent(run.error_lower_bound),
        percent(run.error_upper_bound),
        claim,
        training,
        theory,
        needed,
    );
    // Why the verdict, then the findings in words: one full-width row under the run.
    let mut items = vec![format!(
        "<li class=\"why\">{} <span class=\"sub\">certifiable accuracy {}</span></li>",
        escape_html(&super::text::why_text(run, &doc.claims)),
        percent(run.certifiable_accuracy)
    )];
    if let Some(carried) = super::text::carried_line(run) {
        items.push(format!("<li class=\"sub\">{}</li>", escape_html(&carried)));
    }
    items.extend(run.findings.iter().map(|f| {
        format!(
            "<li><code>{}</code> {}</li>",
            f.code.as_str(),
            escape_html(&f.message)
        )
    }));
    rows.push_str(&format!(
        "<tr class=\"findings\"><td></td><td colspan=\"{}\"><ul class=\"findings\">{}</ul></td></tr>\n",
        TABLE_COLUMNS - 1,
        items.join("")
    ));
    rows
}

/// Most wear charts drawn (the most compared splits).
const WEAR_CHARTS: usize = 6;

/// The held-out splits: a chart per split for the most compared ones, and a table.
fn splits_section(doc: &AuditDocument, page: &mut String) -> io::Result<()> {
    if doc.splits.is_empty() {
        return Ok(());
    }
    let splits = super::splits::splits_worth_showing(&doc.splits);
    page.push_str("<section>\n<h2>Held-out split wear</h2>\n");
    page.push_str("<p class=\"note\">Every model compared on a held-out split divides the level of every bound on it by K, so each comparison spends some of the split's power to certify. Each chart shows the accuracy the split's best run can certify against the models compared on the split (log scale), today's K, the best run's claim, and, where runs log <code>logged_at</code>, the history in time order.</p>\n<div class=\"wear\">\n");
    for entry in splits.iter().take(WEAR_CHARTS) {
        let svg = charts::wear_chart_svg(entry)?;
        page.push_str("<figure class=\"wear\">");
        page.push_str(&charts::inline_svg(
            &svg,
            &format!(
                "Certifiable accuracy of split {} against models compared",
                entry.split
            ),
        ));
        page.push_str("</figure>\n");
    }
    page.push_str("</div>\n<div class=\"wide\"><table class=\"splits\">\n<thead><tr><th>split</th><th class=\"num\">K</th><th>best run</th><th class=\"num\">best error</th><th class=\"num\">certifiable now</th><th class=\"num\">used once</th><th class=\"num\">reuse cost</th><th class=\"num\">comparisons left</th></tr></thead>\n<tbody>\n");
    for entry in &splits {
        page.push_str(&format!(
            "<tr><td class=\"run\">{}{}</td><td class=\"num\">{}</td><td>{}</td><td class=\"num\">{} <span class=\"sub\">{} / {}</span></td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{:.2} pts</td><td class=\"num\">{}</td></tr>\n",
            escape_html(&entry.split),
            if entry.size_mismatch { "<span class=\"sub\">runs log different sizes</span>" } else { "" },
            group_thousands(entry.candidates),
            escape_html(&entry.best_run),
            percent(entry.best_error_rate),
            group_thousands(entry.best_misclassified),
            group_thousands(entry.holdout_n),
            percent(entry.certifiable_now),
            percent(entry.certifiable_fresh),
            entry.reuse_cost * 100.0,
            match entry.comparisons_left {
                Some(left) if left >= crate::theory::reuse::CANDIDATES_CAP - entry.candidates => "10¹² or more".to_string(),
                Some(left) => group_thousands(left),
                None => "—".to_string(),
            },
        ));
    }
    page.push_str("</tbody></table></div>\n</section>\n");
    Ok(())
}

fn optional_note(doc: &AuditDocument) -> String {
    if doc.summary.reuse_unchecked > 0 {
        format!(
            "{} run(s) name no held-out split, so reuse of their split could not be checked.",
            group_thousands(doc.summary.reuse_unchecked as u64)
        )
    } else {
        String::new()
    }
}

fn cautions_section(doc: &AuditDocument, page: &mut String) {
    page.push_str("<section>\n<h2>Cautions</h2>\n<div class=\"cautions\"><ul>\n");
    for caution in &doc.cautions {
        page.push_str(&format!("<li>{}</li>\n", escape_html(caution)));
    }
    page.push_str("</ul></div>\n</section>\n");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escape_html_covers_the_five_characters() {
        assert_eq!(
            escape_html(r#"<a href="x">'&'</a>"#),
            "&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;"
        );
        assert_eq!(escape_html("plain ü"), "plain ü");
    }
}
