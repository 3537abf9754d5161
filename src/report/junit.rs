//! JUnit XML (SPEC §12): the test-report format CI systems display. One test case per
//! claim: each run that makes a claim, then each claim of the claims files. A test
//! case fails exactly when the gate fails on it ([`gate_fails_on_run`],
//! [`gate_fails_on_claim`]), with the explanation (runs) or evidence (claims) as the
//! failure message; the verdict, method, confidence and bounds are its properties.
//!
//! A failure's `type` and the start of its `message` name what fails the gate: the
//! verdict, or the code of the finding that fails it when the verdict alone would
//! pass. A row skipped under `--lenient` that carried a claim is an `error` case
//! (the claim could not be audited), with the row's problems.
//!
//! The format has no formal standard; this follows the de facto schema most CI
//! systems read (common practice): `testsuites` > `testsuite` > `testcase`, with
//! `failure`, `properties` and `system-out`.

use std::io::{self, Write};

use super::document::AuditDocument;
use super::text::percent;
use crate::audit::claims::ClaimResult;
use crate::audit::{gate_fails_on_claim, gate_fails_on_run, gate_reason, RunResult};
use crate::ingest::SkippedRow;

/// Writes the document as JUnit XML.
pub fn write_junit(doc: &AuditDocument, out: &mut dyn Write) -> io::Result<()> {
    let settings = &doc.settings;
    let confidence = settings.confidence.to_string();
    let runs: Vec<&RunResult> = doc
        .runs
        .iter()
        .filter(|run| run.verdict != crate::audit::Verdict::NoClaim)
        .collect();
    let run_fails: Vec<bool> = runs
        .iter()
        .map(|run| gate_fails_on_run(run, settings.gate, &settings.gate_allow))
        .collect();
    let claim_fails: Vec<bool> = doc
        .claims
        .iter()
        .map(|claim| {
            gate_fails_on_claim(
                claim.verdict,
                &claim.findings,
                settings.gate,
                &settings.gate_allow,
            )
        })
        .collect();
    let count = |fails: &[bool]| fails.iter().filter(|&&f| f).count();
    let failures = count(&run_fails) + count(&claim_fails);
    let skipped: Vec<&SkippedRow> = doc
        .skipped_rows
        .iter()
        .filter(|row| row.carries_claim)
        .collect();

    let mut xml =
        String::with_capacity(1024 + 1024 * (runs.len() + doc.claims.len() + skipped.len()));
    xml.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    xml.push_str(&format!(
        "<testsuites name=\"gapcert audit\" tests=\"{}\" failures=\"{failures}\" errors=\"{}\" time=\"0\">\n",
        runs.len() + doc.claims.len() + skipped.len(),
        skipped.len()
    ));
    let suite_properties = [
        ("confidence", confidence.clone()),
        ("holdout_bound", settings.holdout_bound.as_str().to_string()),
        ("familywise", settings.familywise.to_string()),
        ("gate", settings.gate.as_str().to_string()),
        (
            "gate_result",
            match doc.summary.gate {
                crate::audit::GateResult::Pass => "pass",
                crate::audit::GateResult::Fail => "fail",
            }
            .to_string(),
        ),
        ("gapcert_version", doc.tool.version.clone()),
    ];

    open_suite(
        &mut xml,
        "claims in the logs",
        runs.len(),
        (count(&run_fails), 0),
        &doc.generated_at,
        &suite_properties,
    );
    let audit_settings = doc.settings.audit_settings();
    for (run, &fails) in runs.iter().zip(&run_fails) {
        let failure = fails.then(|| {
            match gate_reason(
                run.verdict,
                &run.findings,
                settings.gate,
                &settings.gate_allow,
            ) {
                Ok(finding) => {
                    let sentence =
                        crate::audit::explain::finding_sentence(run, finding, &audit_settings);
                    (
                        finding.code.as_str().to_string(),
                        format!(
                            "{}: {sentence} (verdict: {})",
                            finding.code.as_str(),
                            run.explanation
                        ),
                    )
                }
                Err(verdict) => (verdict.as_str().to_string(), run.explanation.clone()),
            }
        });
        run_case(
            &mut xml,
            run,
            failure,
            &confidence,
            doc.settings.holdout_bound.as_str(),
        );
    }
    xml.push_str("  </testsuite>\n");

    if !doc.claims.is_empty() {
        open_suite(
            &mut xml,
            "claims under review",
            doc.claims.len(),
            (count(&claim_fails), 0),
            &doc.generated_at,
            &suite_properties,
        );
        for (claim, &fails) in doc.claims.iter().zip(&claim_fails) {
            let failure = fails.then(|| {
                match gate_reason(
                    claim.verdict,
                    &claim.findings,
                    settings.gate,
                    &settings.gate_allow,
                ) {
                    Ok(finding) => (
                        finding.code.as_str().to_string(),
                        format!(
                            "{}: {} (verdict: {})",
                            finding.code.as_str(),
                            finding.message,
                            claim.evidence
                        ),
                    ),
                    Err(verdict) => (verdict.as_str().to_string(), claim.evidence.clone()),
                }
            });
            claim_case(&mut xml, claim, failure, &confidence);
        }
        xml.push_str("  </testsuite>\n");
    }
    if !skipped.is_empty() {
        open_suite(
            &mut xml,
            "rows skipped with a claim",
            skipped.len(),
            (0, skipped.len()),
            &doc.generated_at,
            &suite_properties,
        );
        for row in &skipped {
            skipped_case(&mut xml, row);
        }
        xml.push_str("  </testsuite>\n");
    }
    xml.push_str("</testsuites>\n");
    out.write_all(xml.as_bytes())
}

fn open_suite(
    xml: &mut String,
    name: &str,
    tests: usize,
    (failures, errors): (usize, usize),
    timestamp: &str,
    properties: &[(&str, String)],
) {
    xml.push_str(&format!(
        "  <testsuite name=\"{}\" tests=\"{tests}\" failures=\"{failures}\" errors=\"{errors}\" skipped=\"0\" time=\"0\" timestamp=\"{}\">\n",
        escape_xml(name),
        escape_xml(timestamp)
    ));
    push_properties(xml, "    ", properties);
}

fn push_properties(xml: &mut String, indent: &str, properties: &[(&str, String)]) {
    xml.push_str(indent);
    xml.push_str("<properties>\n");
    for (name, value) in properties {
        xml.push_str(&format!(
            "{indent}  <property name=\"{}\" value=\"{}\"/>\n",
            escape_xml(name),
            escape_xml(value)
        ));
    }
    xml.push_str(indent);
    xml.push_str("</properties>\n");
}

/// The file of a `file:row` source (the test case's class: cases group by log).
fn file_of(source: &str) -> &str {
    source.rsplit_once(':').map_or(source, |(file, _)| file)
}

/// A row skipped under `--lenient` that carried a claim: an `error` case with the
/// row's problems (the claim could not be audited, so the gate fails).
fn skipped_case(xml: &mut String, row: &SkippedRow) {
    xml.push_str(&format!(
        "    <testcase classname=\"{}\" name=\"{}: skipped row with a claim\" time=\"0\">\n",
        escape_xml(file_of(&row.source)),
        escape_xml(&row.source)
    ));
    let message = format!(
        "skipped_row: {}: the row carries a claim but could not be read ({}), so its claim was not audited",
        row.source,
        row.reasons.join("; ")
    );
    let mut details = row.reasons.clone();
    details.push(format!("source: {}", row.source));
    xml.push_str(&format!(
        "      <error type=\"skipped_row\" message=\"{}\">{}</error>\n",
        escape_xml(&message),
        escape_xml_text(&details.join("\n"))
    ));
    xml.push_str("    </testcase>\n");
}

/// What fails the gate on a case, as the failure's (type, message); `None` when the
/// gate does not fail on it.
type Failure = Option<(String, String)>;

fn run_case(xml: &mut String, run: &RunResult, failure: Failure, confidence: &str, method: &str) {
    let claimed = run
        .claim_error_rate
        .map(|error| format!(": claimed accuracy {}", percent(1.0 - error)))
        .unwrap_or_default();
    xml.push_str(&format!(
        "    <testcase classname=\"{}\" name=\"{}{}\" time=\"0\">\n",
        escape_xml(file_of(&run.source)),
        escape_xml(&run.run),
        escape_xml(&claimed)
    ));
    let mut properties = vec![
        ("verdict", run.verdict.as_str().to_string()),
        ("method", method.to_string()),
        ("confidence", confidence.to_string()),
        ("candidates", run.candidates.to_string()),
        ("delta", run.delta.to_string()),
        ("error_upper_bound", run.error_upper_bound.to_string()),
        ("error_lower_bound", run.error_lower_bound.to_string()),
        ("certifiable_accuracy", run.certifiable_accuracy.to_string()),
        ("source", run.source.clone()),
    ];
    if let Some(needed) = run.holdout_needed {
        properties.push(("holdout_needed", needed.to_string()));
    }
    for (name, value) in &run.kept {
        properties.push((name.as_str(), value.clone().unwrap_or_default()));
    }
    push_properties(xml, "      ", &properties);
    let mut details = vec![run.explanation.clone()];
    details.extend(run.findings.iter().map(|f| {
        if f.message.is_empty() {
            f.code.as_str().to_string()
        } else {
            format!("{}: {}", f.code.as_str(), f.message)
        }
    }));
    details.push(format!("source: {}", run.source));
    finish_case(xml, failure, &details);
}

fn claim_case(xml: &mut String, claim: &ClaimResult, failure: Failure, confidence: &str) {
    let statement = claim
        .statement
        .as_deref()
        .map(|s| format!(": {s}"))
        .unwrap_or_default();
    xml.push_str(&format!(
        "    <testcase classname=\"{}\" name=\"{}{}\" time=\"0\">\n",
        escape_xml(file_of(&claim.source)),
        escape_xml(&claim.claim),
        escape_xml(&statement)
    ));
    let mut properties = vec![
        ("verdict", claim.verdict.as_str().to_string()),
        ("kind", claim.kind.as_str().to_string()),
        ("method", claim.method.as_str().to_string()),
        ("confidence", confidence.to_string()),
        ("delta", claim.delta.to_string()),
        ("lower", claim.lower.to_string()),
        ("upper", claim.upper.to_string()),
        ("run", claim.run.clone()),
        ("source", claim.source.clone()),
    ];
    if let Some(baseline) = &claim.baseline {
        properties.push(("baseline", baseline.clone()));
    }
    if let Some(p) = claim.mcnemar_p {
        properties.push(("mcnemar_p", p.to_string()));
    }
    push_properties(xml, "      ", &properties);
    let mut details = vec![claim.evidence.clone()];
    details.extend(
        claim
            .findings
            .iter()
            .map(|f| format!("{}: {}", f.code.as_str(), f.message)),
    );
    details.push(format!("source: {}", claim.source));
    finish_case(xml, failure, &details);
}

/// The failure (when the gate fails on the case) or the explanation as output, and
/// the closing tag.
fn finish_case(xml: &mut String, failure: Failure, details: &[String]) {
    let body = escape_xml_text(&details.join("\n"));
    if let Some((kind, message)) = failure {
        xml.push_str(&format!(
            "      <failure type=\"{}\" message=\"{}\">{body}</failure>\n",
            escape_xml(&kind),
            escape_xml(&message)
        ));
    } else {
        xml.push_str(&format!("      <system-out>{body}</system-out>\n"));
    }
    xml.push_str("    </testcase>\n");
}

/// Text as XML 1.0 character data or attribute value: the five markup characters as
/// entities, tabs and line breaks as character references (attribute values would
/// otherwise fold them into spaces), and characters XML 1.0 does not allow at all
/// (other C0 controls, U+FFFE, U+FFFF) as U+FFFD.
pub fn escape_xml(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\t' => out.push_str("&#9;"),
            '\n' => out.push_str("&#10;"),
            '\r' => out.push_str("&#13;"),
            '\u{0}'..='\u{1f}' | '\u{fffe}' | '\u{ffff}' => out.push('\u{fffd}'),
            _ => out.push(c),
        }
    }
    out
}

/// [`escape_xml`] for element content, where line breaks and tabs may stay as they are.
fn escape_xml_text(text: &str) -> String {
    escape_xml(text)
        .replace("&#10;", "\n")
        .replace("&#9;", "\t")
}

#[cfg(test)]
mod tests {
    use super::escape_xml;

    #[test]
    fn markup_and_forbidden_characters_are_escaped() {
        assert_eq!(
            escape_xml("a<b>&\"c'\u{1}\u{ffff}\té"),
            "a&lt;b&gt;&amp;&quot;c&apos;\u{fffd}\u{fffd}&#9;é"
        );
        assert_eq!(escape_xml("]]>"), "]]&gt;");
    }
}
