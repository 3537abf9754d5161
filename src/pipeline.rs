//! The streaming audit: logs are read, audited and written in batches, so memory
//! stays bounded however many runs the logs hold (SPEC §8: ten million runs within
//! 4 GB).
//!
//! Two passes. The first validates every row, so every problem is reported before
//! any output is written, and counts what the audit needs to know about all runs
//! before it can audit one ([`AuditScope`]: claims for `--familywise`, runs per
//! held-out split for K). The second audits batch by batch and hands each batch of
//! results to a writer. When the runs fit in [`StreamLimits::hold_runs`], the first
//! pass keeps them and the logs are not validated twice.
//!
//! Every run's result depends only on the run, the scope and the settings, so the
//! streamed results equal those of [`crate::audit_paths`] (tests/it/streaming.rs).

use std::io;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc;

use crate::audit::splits::{SplitAccumulator, SplitObservation};
use crate::audit::{AuditScope, AuditSettings, Auditor, RunResult, Summary, Verdict};
use crate::error::Error;
use crate::ingest::{
    self, Collected, FileProgress, IngestSettings, InputFile, LogSource, LogSummary, OpenedLog,
    SkippedFile, SkippedRow,
};
use crate::report::document::{AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};
use crate::run::{RowDecisions, RunInput, RunKey};

/// Batch sizes of the streaming audit.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct StreamLimits {
    /// Rows validated and audited together (Parquet batches hold whole row groups).
    pub batch_rows: usize,
    /// Up to this many runs are kept from the first pass; beyond it they are dropped
    /// and the logs are validated again in the second pass.
    pub hold_runs: usize,
}

impl Default for StreamLimits {
    fn default() -> Self {
        StreamLimits {
            batch_rows: 1 << 16,
            hold_runs: 2_000_000,
        }
    }
}

/// A log after the first pass: its table kept only when its runs were not (a folder
/// of 200,000 small logs must not hold 200,000 tables); a dropped table is read again
/// if the second pass needs it after all.
struct PassedLog<'a> {
    source: LogSource<'a>,
    table: Option<OpenedLog<'a>>,
}

/// Logs that passed the first pass, ready to be audited batch by batch.
pub struct PreparedAudit<'a> {
    logs: Vec<PassedLog<'a>>,
    /// Per log: whether its runs are audited (a log skipped under `--lenient` is not).
    usable: Vec<bool>,
    /// The runs, batch by batch, when they were few enough to keep.
    held: Option<Vec<Vec<RunInput>>>,
    scope: AuditScope,
    runs: usize,
    settings: IngestSettings,
    limits: StreamLimits,
    pub inputs: Vec<InputFile>,
    pub skipped_rows: Vec<SkippedRow>,
    pub skipped_files: Vec<SkippedFile>,
    /// Data rows of the logs skipped whole under `--lenient`.
    pub rows_in_skipped_files: usize,
    /// `file: note` lines worth saying under `-v`.
    pub notes: Vec<String>,
    /// Files identical to an earlier one, named by the runs of the earlier one.
    file_copies: ingest::FileCopies,
    /// Per log index: the copies found by key in a stream too long to hold.
    stream_copies: std::collections::BTreeMap<u32, RowDecisions>,
    /// Runs read twice and counted once (see [`crate::run::set_aside_copies`]).
    pub copies_set_aside: usize,
}

/// What one log's first pass produced.
struct FirstPass {
    report: ingest::FileReport,
    scope: AuditScope,
    runs: usize,
    held: Option<Vec<Vec<RunInput>>>,
    /// Keys of the runs not held (log index 0: set when the logs are merged).
    keys: Vec<RunKey>,
}

/// The keys of runs (of log 0) for setting aside copies in a stream.
fn keys_of(runs: &[RunInput]) -> impl Iterator<Item = RunKey> + '_ {
    runs.iter().filter_map(|run| RunKey::of(run, 0))
}

/// The first pass over the logs found at `paths` (files or folders).
pub fn prepare_paths(
    paths: &[PathBuf],
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'static>, Error> {
    prepare_discovered(&ingest::discover(paths)?, settings, limits, progress)
}

/// The first pass over the logs `discovery` found.
pub fn prepare_discovered(
    discovery: &ingest::Discovery,
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'static>, Error> {
    let sources: Vec<LogSource<'static>> =
        discovery.logs.iter().map(ingest::LogFile::source).collect();
    let mut prepared = prepare(&sources, settings, limits, progress)?;
    prepared
        .skipped_files
        .extend(ingest::not_log_files(discovery));
    Ok(prepared)
}

/// The first pass over the given sources: open, validate and count every run.
pub fn prepare<'a>(
    sources: &[LogSource<'a>],
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'a>, Error> {
    ingest::columns::check_column_map(&settings.column_map).map_err(Error::Usage)?;
    let done = AtomicUsize::new(0);
    let held_runs = AtomicUsize::new(0);
    let (logs, passes): (Vec<(PassedLog<'a>, LogSummary)>, Vec<FirstPass>) =
        ingest::map_files(sources, |source| {
            let settings = settings.for_file(&ingest::source_label(source));
            let settings = settings.as_ref();
            let log = OpenedLog::open(source, settings);
            let mut scope = AuditScope::default();
            let mut runs = 0;
            let mut held: Option<Vec<Vec<RunInput>>> = Some(Vec::new());
            let mut keys = Vec::new();
            let report = log.validate(settings, limits.batch_rows, &mut |batch| {
                for run in &batch {
                    scope.observe(run);
                }
                runs += batch.len();
                let total = held_runs.fetch_add(batch.len(), Ordering::Relaxed) + batch.len();
                match &mut held {
                    Some(batches) if total <= limits.hold_runs => batches.push(batch),
                    _ => {
                        // Runs dropped here are compared by key for copies.
                        for dropped in held.take().into_iter().flatten() {
                            keys.extend(keys_of(&dropped));
                        }
                        keys.extend(keys_of(&batch));
                    }
                }
                true
            });
            let finished = done.fetch_add(1, Ordering::Relaxed) + 1;
            progress(finished, sources.len());
            let summary = log.summary();
            let table = if held.is_some() { None } else { Some(log) };
            let pass = FirstPass {
                report,
                scope,
                runs,
                held,
                keys,
            };
            (
                (
                    PassedLog {
                        source: source.clone(),
                        table,
                    },
                    summary,
                ),
                pass,
            )
        })
        .into_iter()
        .unzip();
    let (logs, summaries): (Vec<PassedLog<'a>>, Vec<LogSummary>) = logs.into_iter().unzip();

    let mut collected = Collected::default();
    let mut scope = AuditScope::default();
    let mut usable = Vec::with_capacity(logs.len());
    let mut held: Option<Vec<Vec<RunInput>>> = Some(Vec::new());
    let mut runs = 0;
    let keep_all = held_runs.load(Ordering::Relaxed) <= limits.hold_runs;
    let mut keys: Vec<RunKey> = Vec::new();
    for (index, (summary, mut pass)) in summaries.iter().zip(passes).enumerate() {
        let use_log = collected.add(summary, pass.report, settings.lenient);
        usable.push(use_log);
        if !use_log {
            continue;
        }
        scope.merge(pass.scope);
        runs += pass.runs;
        if !keep_all {
            for batch in pass.held.take().into_iter().flatten() {
                pass.keys.extend(keys_of(&batch));
            }
            let log = u32::try_from(index).unwrap_or(u32::MAX);
            keys.extend(pass.keys.into_iter().map(|key| RunKey { log, ..key }));
        }
        match (&mut held, pass.held) {
            (Some(all), Some(batches)) if keep_all => {
                // Small logs give small batches: gather them into batches of about
                // `batch_rows` runs, so that a folder of 20,000 one-run logs crosses the
                // stages in a few batches, not 20,000.
                for batch in batches {
                    match all.last_mut() {
                        Some(last) if last.len() + batch.len() <= limits.batch_rows => {
                            last.extend(batch)
                        }
                        _ => all.push(batch),
                    }
                }
            }
            _ => held = None,
        }
    }
    if settings.cancel.is_cancelled() {
        return Err(Error::Interrupted);
    }
    collected.finish(sources, runs, &settings.keep)?;
    let mut copies_set_aside = collected.copies_set_aside;
    let mut stream_copies = std::collections::BTreeMap::new();
    if held.is_none() {
        // Too many runs to hold: copies are found by key, and the scope is counted
        // again without them (a third reading, only when there are any).
        let (decisions, set_aside) = crate::run::copies_among_keys(keys);
        stream_copies = decisions;
        if set_aside > 0 {
            copies_set_aside += set_aside;
            runs -= set_aside;
            scope = rescope(&logs, &usable, &stream_copies, settings, limits)?;
        }
    } else if let Some(batches) = &mut held {
        // Runs read twice (a row repeated, a log copied under another name with other
        // bytes) count once. Only held runs can be compared: a stream of more runs than
        // `hold_runs` sets aside identical files only.
        for batch in batches.iter_mut() {
            collected.file_copies.name_copies(batch);
        }
        let set_aside = crate::run::set_aside_copies_in_batches(batches);
        if set_aside > 0 {
            batches.retain(|batch| !batch.is_empty());
            copies_set_aside += set_aside;
            runs -= set_aside;
            scope = AuditScope::default();
            for run in batches.iter().flatten() {
                scope.observe(run);
            }
        }
    }
    Ok(PreparedAudit {
        logs,
        usable,
        held,
        scope,
        runs,
        file_copies: std::mem::take(&mut collected.file_copies),
        stream_copies,
        copies_set_aside,
        settings: settings.clone(),
        limits,
        inputs: collected.inputs,
        skipped_rows: collected.skipped_rows,
        skipped_files: collected.skipped_files,
        rows_in_skipped_files: collected.rows_in_skipped_files,
        notes: collected.notes,
    })
}

/// The scope of the usable logs' runs without the copies set aside by key.
fn rescope(
    logs: &[PassedLog<'_>],
    usable: &[bool],
    decisions: &std::collections::BTreeMap<u32, RowDecisions>,
    settings: &IngestSettings,
    limits: StreamLimits,
) -> Result<AuditScope, Error> {
    let no_sources = |_: u32, _: u64| Vec::new();
    let mut scope = AuditScope::default();
    for (index, (passed, &usable)) in logs.iter().zip(usable).enumerate() {
        if !usable {
            continue;
        }
        if settings.cancel.is_cancelled() {
            return Err(Error::Interrupted);
        }
        let file_settings = settings.for_file(&ingest::source_label(&passed.source));
        let reopened;
        let log = match &passed.table {
            Some(table) => table,
            None => {
                reopened = OpenedLog::open(&passed.source, &file_settings);
                &reopened
            }
        };
        let decision = u32::try_from(index)
            .ok()
            .and_then(|index| decisions.get(&index));
        log.validate(&file_settings, limits.batch_rows, &mut |mut batch| {
            if let Some(decision) = decision {
                decision.apply(&mut batch, &no_sources);
            }
            for run in &batch {
                scope.observe(run);
            }
            true
        });
    }
    Ok(scope)
}

impl PreparedAudit<'_> {
    /// Runs that will be audited.
    pub fn runs(&self) -> usize {
        self.runs
    }

    /// Checks that the audit settings fit the runs (see [`AuditScope::check`]);
    /// call it before writing anything.
    pub fn check(&self, audit_settings: &AuditSettings) -> Result<(), Error> {
        self.scope.check(audit_settings)
    }

    /// The second pass: audits every run, batch by batch in input order, handing each
    /// batch of results to `sink`; returns the summary with the gate applied. With
    /// `messages` false the findings carry codes only (all the flat formats print).
    ///
    /// Three stages overlap: one thread reads and validates the next batch, another
    /// audits the current one, and this thread hands the previous one to `sink` (the
    /// writer stays on the caller's thread, so `sink` need not be `Send`).
    pub fn audit(
        self,
        audit_settings: &AuditSettings,
        messages: bool,
        sink: &mut dyn FnMut(&[RunResult]) -> io::Result<()>,
    ) -> io::Result<Summary> {
        self.audit_through(
            audit_settings,
            messages,
            &|results| results,
            &mut |results| sink(&results),
        )
    }

    /// [`Self::audit`] with a fourth stage: each batch of results is turned into `T`
    /// (say, formatted bytes) on a thread of its own, so that `sink` (say, the kernel
    /// copying those bytes to a file) overlaps with formatting and auditing.
    pub fn audit_through<T: Send>(
        self,
        audit_settings: &AuditSettings,
        messages: bool,
        transform: &(dyn Fn(Vec<RunResult>) -> T + Sync),
        sink: &mut dyn FnMut(T) -> io::Result<()>,
    ) -> io::Result<Summary> {
        let mut auditor = Auditor::new(&self.scope, audit_settings);
        if !messages {
            auditor = auditor.codes_only();
        }
        let PreparedAudit {
            logs,
            usable,
            held,
            settings,
            limits,
            skipped_rows,
            skipped_files,
            rows_in_skipped_files,
            file_copies,
            stream_copies,
            copies_set_aside,
            ..
        } = self;
        let labels: Vec<String> = logs
            .iter()
            .map(|log| ingest::source_label(&log.source))
            .collect();
        // One batch in flight per stage bounds the memory to a few batches.
        let (inputs_out, inputs_in) = mpsc::sync_channel::<Vec<RunInput>>(1);
        let (results_out, results_in) = mpsc::sync_channel::<Vec<RunResult>>(1);
        let (done_out, done_in) = mpsc::sync_channel::<T>(1);
        let (written, counted) = std::thread::scope(|scope| {
            scope.spawn(move || match held {
                Some(batches) => {
                    for batch in batches {
                        if inputs_out.send(batch).is_err() {
                            return;
                        }
                    }
                }
                None => {
                    let sources = |log: u32, row: u64| {
                        let label = &labels[log as usize];
                        let mut sources = vec![format!("{label}:{row}")];
                        sources.extend(file_copies.copies_at(label, row));
                        sources
                    };
                    for (index, (passed, usable)) in logs.into_iter().zip(&usable).enumerate() {
                        if !usable {
                            continue;
                        }
                        let decisions = u32::try_from(index)
                            .ok()
                            .and_then(|index| stream_copies.get(&index));
                        let file_settings =
                            settings.for_file(&ingest::source_label(&passed.source));
                        let log = passed
                            .table
                            .unwrap_or_else(|| OpenedLog::open(&passed.source, &file_settings));
                        // Bad rows were reported by the first pass; only runs matter now.
                        let mut stopped = false;
                        log.validate(&file_settings, limits.batch_rows, &mut |mut batch| {
                            file_copies.name_copies(&mut batch);
                            if let Some(decisions) = decisions {
                                decisions.apply(&mut batch, &sources);
                                if batch.is_empty() {
                                    return true;
                                }
                            }
                            stopped = inputs_out.send(batch).is_err();
                            !stopped
                        });
                        if stopped {
                            return;
                        }
                    }
                }
            });
            let auditor = &auditor;
            scope.spawn(move || {
                for batch in inputs_in {
                    if results_out.send(auditor.audit(batch)).is_err() {
                        return;
                    }
                }
            });
            let counter = scope.spawn(move || {
                let mut summary = Summary::default();
                for results in results_in {
                    for result in &results {
                        summary.count(result, &audit_settings.gate_allow);
                    }
                    if done_out.send(transform(results)).is_err() {
                        break;
                    }
                }
                summary
            });
            // On an error the channels close and the other stages stop.
            let written = done_in.into_iter().try_for_each(&mut *sink);
            // The counting stage only panics if `transform` does: pass that on.
            let counted = counter
                .join()
                .unwrap_or_else(|panic| std::panic::resume_unwind(panic));
            (written, counted)
        });
        written?;
        let mut summary = counted;
        summary.rows_skipped = skipped_rows.len() + rows_in_skipped_files;
        summary.copies_set_aside = copies_set_aside;
        summary.rows_read = summary.runs + summary.rows_skipped + copies_set_aside;
        summary.files_skipped = skipped_files.len();
        summary.apply_gate(audit_settings.gate);
        Ok(summary)
    }
}

impl PreparedAudit<'_> {
    /// Audits every run but keeps only the `keep` worst of those whose verdict is in
    /// `only` (all when empty), in the order of [`crate::audit::result::worst_first`],
    /// with their sentences written: the document of a human-readable report of a
    /// long audit, whose summary still counts every run. Memory holds the runs of a
    /// few batches and the ones kept, however many runs the logs hold.
    pub fn audit_keeping_worst(
        self,
        audit_settings: &AuditSettings,
        ingest_settings: &IngestSettings,
        keep: usize,
        only: &[Verdict],
    ) -> io::Result<AuditDocument> {
        let inputs = self.inputs.clone();
        let delta = self.scope.delta(audit_settings);
        let mut splits = SplitAccumulator::default();
        let skipped_rows = self.skipped_rows.clone();
        let notes = self.notes.clone();
        let skipped_files = self.skipped_files.clone();
        let mut kept: Vec<RunResult> = Vec::new();
        let order = crate::audit::result::worst_first;
        // Each batch is narrowed to its own `keep` worst on the formatting stage, so
        // the writer's thread only merges.
        let narrow = |mut results: Vec<RunResult>| -> Vec<RunResult> {
            if !only.is_empty() {
                results.retain(|r| only.contains(&r.verdict));
            }
            if results.len() > keep {
                results.select_nth_unstable_by(keep, order);
                results.truncate(keep);
            }
            results
        };
        // The splits see every run (in input order), before the batch is narrowed.
        let observe = |results: Vec<RunResult>| {
            let seen: Vec<SplitObservation> =
                results.iter().filter_map(SplitObservation::of).collect();
            (seen, narrow(results))
        };
        let summary =
            self.audit_through(audit_settings, false, &observe, &mut |(seen, batch)| {
                for observation in seen {
                    splits.add(observation);
                }
                kept.extend(batch);
                if kept.len() > keep.saturating_mul(2).max(1024) {
                    kept.select_nth_unstable_by(keep, order);
                    kept.truncate(keep);
                }
                Ok(())
            })?;
        if kept.len() > keep {
            kept.select_nth_unstable_by(keep, order);
            kept.truncate(keep);
        }
        kept.sort_by(order);
        for run in &mut kept {
            crate::audit::explain::fill_messages(run, audit_settings);
        }
        Ok(AuditDocument {
            tool: ToolInfo::current(),
            generated_at: crate::report::document::now_rfc3339(),
            settings: DocumentSettings::new(audit_settings, ingest_settings),
            inputs,
            runs: kept,
            claims: Vec::new(),
            claim_files: Vec::new(),
            splits: splits.finish(audit_settings, delta),
            summary,
            skipped_rows,
            skipped_files,
            cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
            notes,
        })
    }
}
