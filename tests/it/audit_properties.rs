//! Properties of the audit through the library API (`gapcert::audit::audit_runs`):
//!
//! - verdicts and every other field do not depend on the order of the rows;
//! - a verdict agrees with its bounds: certified ⇔ U ≤ c, refuted ⇔ L > c;
//! - a higher confidence widens every bound (U rises, L falls), so it never creates a
//!   verdict: certified at the higher confidence ⇒ certified at the lower one, refuted
//!   at the higher ⇒ refuted at the lower. Going up, certified may become unproven and
//!   refuted may become unproven, but unproven never becomes certified or refuted, and
//!   certified and refuted never swap;
//! - more models compared on a split (K) and `--familywise` act the same way;
//! - `holdout_needed` is what it says: at that many held-out examples with the same
//!   error rate (k = ⌈ê·n⌉) the claim is certified, and at one fewer it is not;
//! - the same runs read from CSV, JSON lines and Parquet give the same audit.

use std::collections::HashMap;

use gapcert::audit::{audit_runs, AuditSettings, HoldoutBound, RunResult, Verdict};
use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
use gapcert::run::{ClaimForm, RunInput};
use gapcert::theory::growth::Family;
use proptest::prelude::*;

/// One generated run: held-out size and errors, a split among a few, candidates, claim.
fn run_input() -> impl Strategy<Value = RunInput> {
    (
        prop_oneof![1u64..50, 50u64..5_000, 5_000u64..2_000_000],
        0.0f64..=1.0,
        prop::option::of(0usize..4),
        prop_oneof![Just(1u64), 1u64..20],
        prop::option::of(0.0f64..=0.5),
        prop::option::of((1u64..10, 100u64..100_000, 0.0f64..0.3)),
    )
        .prop_map(|(n, fraction, split, candidates, claim, training)| {
            let k = ((n as f64) * fraction * 0.4).floor() as u64;
            let (family, train_n, train_error_rate) = match training {
                Some((dim, train_n, rate)) => {
                    (Some(Family::Linear { dim }), Some(train_n), Some(rate))
                }
                None => (None, None, None),
            };
            RunInput {
                run: String::new(),
                source: String::new(),
                family_key: family.map(|_| "linear".to_string()),
                family,
                train_n,
                train_error_rate,
                holdout_n: n,
                holdout_error_rate: k as f64 / n as f64,
                holdout_misclassified: k,
                misclassified_derived: false,
                holdout_set: split.map(|s| format!("split-{s}")),
                candidates,
                claim_error_rate: claim,
                claim_form: claim.map(|_| ClaimForm::ErrorRate),
                logged_at: None,
                copies: Vec::new(),
                id_repeated: false,
                kept: Vec::new(),
            }
        })
}

/// Several runs with unique sources (`mem:<index>`).
fn runs(max: usize) -> impl Strategy<Value = Vec<RunInput>> {
    prop::collection::vec(run_input(), 1..max).prop_map(|mut runs| {
        for (index, run) in runs.iter_mut().enumerate() {
            run.source = format!("mem:{}", index + 1);
            run.run = format!("run-{}", index + 1);
        }
        runs
    })
}

fn settings() -> impl Strategy<Value = AuditSettings> {
    (
        prop_oneof![Just(0.9), Just(0.95), Just(0.99), 0.5f64..0.999_999],
        prop_oneof![Just(HoldoutBound::Binomial), Just(HoldoutBound::Hoeffding)],
        any::<bool>(),
        any::<bool>(),
    )
        .prop_map(
            |(confidence, holdout_bound, familywise, same_holdout)| AuditSettings {
                confidence,
                holdout_bound,
                familywise,
                same_holdout,
                ..AuditSettings::default()
            },
        )
}

fn by_source(results: Vec<RunResult>) -> HashMap<String, RunResult> {
    results.into_iter().map(|r| (r.source.clone(), r)).collect()
}

/// Whether moving from `loose` (lower confidence, fewer comparisons) to `strict` is
/// allowed: strict certified ⇒ loose certified; strict refuted ⇒ loose refuted.
fn allowed_when_stricter(loose: Verdict, strict: Verdict) -> bool {
    match strict {
        Verdict::Certified => loose == Verdict::Certified,
        Verdict::Refuted => loose == Verdict::Refuted,
        Verdict::Unproven => loose != Verdict::NoClaim,
        Verdict::NoClaim => loose == Verdict::NoClaim,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 96, ..ProptestConfig::default() })]

    #[test]
    fn audit_does_not_depend_on_row_order(
        (original, shuffled) in runs(24).prop_flat_map(|r| (Just(r.clone()), Just(r).prop_shuffle())),
        settings in settings(),
    ) {
        let first = by_source(audit_runs(&original, &settings));
        let second = by_source(audit_runs(&shuffled, &settings));
        prop_assert_eq!(first.len(), original.len());
        for (source, result) in &first {
            prop_assert_eq!(Some(result), second.get(source), "{}", source);
        }
    }

    #[test]
    fn verdicts_agree_with_their_bounds(runs in runs(16), settings in settings()) {
        for r in audit_runs(&runs, &settings) {
            let (lower, upper) = (r.error_lower_bound, r.error_upper_bound);
            prop_assert!((0.0..=1.0).contains(&lower) && (0.0..=1.0).contains(&upper));
            prop_assert!(lower <= upper, "{:?}", r);
            for [lo, hi] in [r.binomial_interval, r.hoeffding_interval] {
                prop_assert!((0.0..=1.0).contains(&lo) && lo <= hi && hi <= 1.0, "{:?}", r);
            }
            prop_assert!(r.delta > 0.0 && r.delta < 1.0);
            match (r.verdict, r.claim_error_rate) {
                (Verdict::Certified, Some(c)) => prop_assert!(upper <= c, "{:?}", r),
                (Verdict::Refuted, Some(c)) => prop_assert!(lower > c, "{:?}", r),
                (Verdict::Unproven, Some(c)) => prop_assert!(upper > c && lower <= c, "{:?}", r),
                (Verdict::NoClaim, None) => {}
                (verdict, claim) => prop_assert!(false, "{:?} with claim {:?}", verdict, claim),
            }
        }
    }

    #[test]
    fn higher_confidence_only_widens_bounds_and_never_creates_a_verdict(
        runs in runs(16),
        settings in settings(),
        raise in 0.0f64..1.0,
    ) {
        let low = settings.confidence;
        let high = low + (1.0 - low) * raise * 0.999;
        prop_assume!(high > low);
        let loose = audit_runs(&runs, &settings);
        let strict = audit_runs(&runs, &AuditSettings { confidence: high, ..settings.clone() });
        for (l, s) in loose.iter().zip(&strict) {
            prop_assert!(s.error_upper_bound >= l.error_upper_bound, "U fell: {:?} → {:?}", l, s);
            prop_assert!(s.error_lower_bound <= l.error_lower_bound, "L rose: {:?} → {:?}", l, s);
            prop_assert!(
                allowed_when_stricter(l.verdict, s.verdict),
                "confidence {} → {}: {:?} became {:?} ({:?})", low, high, l.verdict, s.verdict, s
            );
        }
    }

    #[test]
    fn more_comparisons_and_familywise_never_create_a_verdict(
        runs in runs(16),
        settings in settings(),
        extra in 1u64..1_000,
    ) {
        let loose = audit_runs(&runs, &AuditSettings { familywise: false, ..settings.clone() });
        let more: Vec<RunInput> = runs
            .iter()
            .map(|r| RunInput { candidates: r.candidates + extra, ..r.clone() })
            .collect();
        let compared = audit_runs(&more, &AuditSettings { familywise: false, ..settings.clone() });
        let familywise = audit_runs(&runs, &AuditSettings { familywise: true, ..settings.clone() });
        for ((l, c), f) in loose.iter().zip(&compared).zip(&familywise) {
            prop_assert!(c.candidates >= l.candidates);
            prop_assert!(allowed_when_stricter(l.verdict, c.verdict), "{:?} → {:?}", l, c);
            prop_assert!(allowed_when_stricter(l.verdict, f.verdict), "{:?} → {:?}", l, f);
        }
    }

    #[test]
    fn holdout_needed_is_the_smallest_certifying_size(
        run in run_input(),
        settings in settings(),
    ) {
        let settings = AuditSettings { familywise: false, same_holdout: false, ..settings };
        let mut run = RunInput { source: "mem:1".into(), holdout_set: None, ..run };
        run.claim_error_rate = Some(run.claim_error_rate.unwrap_or(0.2));
        let result = audit_runs(std::slice::from_ref(&run), &settings).remove(0);
        if let Some(needed) = result.holdout_needed {
            prop_assert_eq!(result.verdict, Verdict::Unproven);
            let at = |n: u64| {
                let k = gapcert::theory::sample_size::errors_at(run.holdout_error_rate, n);
                let probe = RunInput {
                    holdout_n: n,
                    holdout_misclassified: k,
                    holdout_error_rate: run.holdout_error_rate,
                    ..run.clone()
                };
                audit_runs(std::slice::from_ref(&probe), &settings).remove(0)
            };
            let certified = at(needed);
            prop_assert_eq!(certified.verdict, Verdict::Certified, "at n = {}: {:?}", needed, certified);
            if needed > 1 {
                let below = at(needed - 1);
                prop_assert!(below.verdict != Verdict::Certified, "n − 1 = {} also certifies", needed - 1);
            }
        }
    }
}

/// The same runs as CSV, JSON lines and Parquet bytes.
fn encodings(runs: &[RunInput]) -> (String, String, Vec<u8>) {
    let mut csv = String::from(
        "run,holdout_n,holdout_misclassified,holdout_set,candidates,claimed_error_rate\n",
    );
    let mut jsonl = String::new();
    for r in runs {
        csv.push_str(&format!(
            "{},{},{},{},{},{}\n",
            r.run,
            r.holdout_n,
            r.holdout_misclassified,
            r.holdout_set.clone().unwrap_or_default(),
            r.candidates,
            r.claim_error_rate
                .map(|c| c.to_string())
                .unwrap_or_default()
        ));
        jsonl.push_str(
            &serde_json::json!({
                "run": r.run,
                "holdout_n": r.holdout_n,
                "holdout_misclassified": r.holdout_misclassified,
                "holdout_set": r.holdout_set,
                "candidates": r.candidates,
                "claimed_error_rate": r.claim_error_rate,
            })
            .to_string(),
        );
        jsonl.push('\n');
    }
    use polars::prelude::*;
    let mut frame = df!(
        "run" => runs.iter().map(|r| r.run.clone()).collect::<Vec<_>>(),
        "holdout_n" => runs.iter().map(|r| r.holdout_n as i64).collect::<Vec<_>>(),
        "holdout_misclassified" => runs.iter().map(|r| r.holdout_misclassified as i64).collect::<Vec<_>>(),
        "holdout_set" => runs.iter().map(|r| r.holdout_set.clone()).collect::<Vec<_>>(),
        "candidates" => runs.iter().map(|r| r.candidates as i64).collect::<Vec<_>>(),
        "claimed_error_rate" => runs.iter().map(|r| r.claim_error_rate).collect::<Vec<_>>(),
    )
    .unwrap();
    let mut parquet = Vec::new();
    ParquetWriter::new(&mut parquet).finish(&mut frame).unwrap();
    (csv, jsonl, parquet)
}

/// Audit results keyed by run name, without the source (which names the file).
fn audit_bytes(
    label: &'static str,
    bytes: &'static [u8],
    format: LogFormat,
) -> HashMap<String, RunResult> {
    let doc = gapcert::audit_sources(
        &[LogSource::Memory(label, bytes, format)],
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .unwrap_or_else(|error| panic!("{label}: {error}"));
    doc.runs
        .into_iter()
        .map(|mut r| {
            r.source = r.source.replace(label, "log");
            (r.run.clone(), r)
        })
        .collect()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn csv_jsonl_and_parquet_give_the_same_audit(runs in runs(12)) {
        let (csv, jsonl, parquet) = encodings(&runs);
        // LogSource::Memory wants 'static bytes; a few leaked kilobytes per case are fine.
        let csv: &'static str = Box::leak(csv.into_boxed_str());
        let jsonl: &'static str = Box::leak(jsonl.into_boxed_str());
        let parquet: &'static [u8] = Box::leak(parquet.into_boxed_slice());
        let from_csv = audit_bytes("p.csv", csv.as_bytes(), LogFormat::Csv);
        let from_jsonl = audit_bytes("p.jsonl", jsonl.as_bytes(), LogFormat::JsonLines);
        let from_parquet = audit_bytes("p.parquet", parquet, LogFormat::Parquet);
        prop_assert_eq!(from_csv.len(), runs.len());
        prop_assert_eq!(&from_csv, &from_jsonl);
        prop_assert_eq!(&from_csv, &from_parquet);
    }
}
