//! The calculators' outputs (`plan`, `growth`, `families`) and `verify`'s, as text;
//! their JSON is the result types serialised ([`super::write_view`]).

use std::io::{self, Write};

use super::text::{group_thousands, printable, wrap};
use super::View;
use crate::calculators::{FamilyList, GrowthTable, HoldoutPlan, ReusePlan, TrainPlan};
use crate::certificate::Verification;

impl View for HoldoutPlan {
    fn write_text(&self, out: &mut dyn Write, _width: Option<u16>) -> io::Result<()> {
        if self.error_rate >= self.claim_error_rate {
            return writeln!(
                out,
                "An observed error rate of {} is not below the claimed error {} (accuracy {}): no held-out set, however large, can certify the claim, by the exact binomial bound or by Hoeffding's. Either the error rate must fall below {}, or the claimed accuracy must come down below {}.",
                self.error_rate,
                self.claim_error_rate,
                self.claim_accuracy,
                self.claim_error_rate,
                crate::decimal::complement(self.error_rate)
            );
        }
        let show = |n: Option<u64>| n.map(group_thousands).unwrap_or_else(|| "—".into());
        writeln!(
            out,
            "To certify accuracy ≥ {} (error ≤ {}) at an observed error rate of {} with confidence {} and {} candidate(s) compared (δ/K = {:.3e}):",
            self.claim_accuracy,
            self.claim_error_rate,
            self.error_rate,
            self.confidence,
            self.candidates,
            self.delta_per_run
        )?;
        writeln!(
            out,
            "  exact binomial bound: {} held-out examples",
            show(self.holdout_needed_binomial)
        )?;
        writeln!(
            out,
            "  Hoeffding bound:      {} held-out examples",
            show(self.holdout_needed_hoeffding)
        )
    }
}

impl View for ReusePlan {
    fn write_text(&self, out: &mut dyn Write, _width: Option<u16>) -> io::Result<()> {
        let show = |k: Option<u64>| match k {
            Some(k) if k >= crate::theory::reuse::CANDIDATES_CAP => "10¹² or more".to_string(),
            Some(k) => group_thousands(k),
            None => "none: even a split used once cannot certify it".to_string(),
        };
        writeln!(
            out,
            "A best run with {} errors in {} held-out examples (error rate {}) certifies accuracy ≥ {} (error ≤ {}) at confidence {} with up to this many models compared on the split:",
            group_thousands(self.holdout_misclassified),
            group_thousands(self.holdout_n),
            self.error_rate,
            self.claim_accuracy,
            self.claim_error_rate,
            self.confidence
        )?;
        writeln!(out, "  exact binomial bound: {}", show(self.max_candidates))?;
        writeln!(
            out,
            "  Hoeffding bound:      {}",
            show(self.hoeffding_max_candidates)
        )
    }
}

impl View for TrainPlan {
    fn write_text(&self, out: &mut dyn Write, _width: Option<u16>) -> io::Result<()> {
        match (self.train_needed, self.vc_allowance_at_train_needed) {
            (Some(n), Some(allowance)) => writeln!(
                out,
                "{}: {} training examples make the VC allowance {:.6} ≤ {} at confidence {} (d_VC {}).",
                self.family,
                group_thousands(n),
                allowance,
                self.tolerance,
                self.confidence,
                self.vc_dim
                    .map(|d| d.to_string())
                    .unwrap_or_else(|| "not defined".into())
            ),
            _ => writeln!(
                out,
                "{}: no training size up to 2^63 makes the VC allowance ≤ {}.",
                self.family, self.tolerance
            ),
        }
    }
}

impl View for GrowthTable {
    fn write_text(&self, out: &mut dyn Write, _width: Option<u16>) -> io::Result<()> {
        let mut table = comfy_table::Table::new();
        table
            .load_preset(comfy_table::presets::UTF8_FULL_CONDENSED)
            .set_header(vec!["N", "m_H(N)", "2^N", "ln m_H(N)", ""]);
        for row in &self.rows {
            let mark = match self.break_point {
                Some(k) if k == row.n => "← break point",
                _ => "",
            };
            table.add_row(vec![
                row.n.to_string(),
                row.growth.0.to_string(),
                row.two_to_n.0.to_string(),
                format!("{:.6}", row.growth_ln),
                mark.to_string(),
            ]);
        }
        writeln!(out, "{table}")?;
        writeln!(
            out,
            "family {}: VC dimension {}, break point {}",
            self.family,
            self.vc_dim
                .map(|d| d.to_string())
                .unwrap_or_else(|| "not defined".into()),
            self.break_point
                .map(|k| k.to_string())
                .unwrap_or_else(|| "none".into())
        )
    }
}

impl View for FamilyList {
    /// A table when it fits `width` (or without a width), otherwise one block per
    /// family with its lines wrapped at spaces, so no word is ever split.
    fn write_text(&self, out: &mut dyn Write, width: Option<u16>) -> io::Result<()> {
        let closing = "Any other family key: no growth bound (finding theory_unavailable); the held-out bounds are still computed.";
        let table_width = self
            .families
            .iter()
            .map(|f| {
                f.key.len()
                    + f.parameters.join(", ").len()
                    + f.growth.len()
                    + f.vc_dim.len()
                    + f.source.len()
                    + 16
            })
            .max()
            .unwrap_or(0);
        if let Some(width) = width.filter(|&w| usize::from(w) < table_width) {
            let width = Some(width);
            for f in &self.families {
                let parameters = if f.parameters.is_empty() {
                    "no parameters".to_string()
                } else {
                    format!("parameters: {}", f.parameters.join(", "))
                };
                writeln!(
                    out,
                    "{}",
                    wrap(&format!("{} ({parameters})", f.key), width, "", "  ")
                )?;
                writeln!(out, "{}", wrap(f.growth, width, "  m_H(N) = ", "      "))?;
                writeln!(
                    out,
                    "{}",
                    wrap(f.vc_dim, width, "  VC dimension: ", "      ")
                )?;
                writeln!(out, "{}", wrap(f.source, width, "  source: ", "      "))?;
                writeln!(out)?;
            }
            return writeln!(out, "{}", wrap(closing, width, "", ""));
        }
        let mut table = comfy_table::Table::new();
        table
            .load_preset(comfy_table::presets::UTF8_FULL_CONDENSED)
            .set_content_arrangement(comfy_table::ContentArrangement::Dynamic)
            .set_header(vec![
                "family",
                "parameters",
                "m_H(N)",
                "VC dimension",
                "source",
            ]);
        for f in &self.families {
            table.add_row(vec![
                f.key.to_string(),
                f.parameters.join(", "),
                f.growth.to_string(),
                f.vc_dim.to_string(),
                f.source.to_string(),
            ]);
        }
        writeln!(out, "{table}")?;
        writeln!(out, "{closing}")
    }
}

impl View for Verification {
    fn write_text(&self, out: &mut dyn Write, _width: Option<u16>) -> io::Result<()> {
        let checked = if self.claim_files == 0 {
            format!("{} input(s) unchanged", self.inputs)
        } else {
            format!(
                "{} input(s) and {} claims file(s) unchanged",
                self.inputs, self.claim_files
            )
        };
        let recomputed = if self.claim_files == 0 {
            format!("{} run(s)", self.runs)
        } else {
            format!("{} run(s) and {} claim(s)", self.runs, self.claims)
        };
        let folder = match &self.root {
            Some(root) => format!("inputs read from {}", printable(root)),
            None => "the demo's built-in logs".to_string(),
        };
        if self.drift.is_empty() {
            writeln!(
                out,
                "{}: verified ({folder}): {checked}, {recomputed} recomputed with identical results",
                printable(&self.certificate)
            )
        } else {
            writeln!(
                out,
                "{}: DRIFT ({} difference(s); {folder})",
                printable(&self.certificate),
                self.drift.len()
            )?;
            // Subjects and details quote the certificate, which anyone can edit: no
            // escape sequence of theirs reaches the terminal.
            for d in &self.drift {
                writeln!(
                    out,
                    "  {:<16} {}: {}",
                    d.kind,
                    printable(&d.subject),
                    printable(&d.detail)
                )?;
            }
            Ok(())
        }
    }
}
