//! The audit engine: every audit, whatever it writes, is this one.
//!
//! Logs are read, audited and handed on in batches, so memory stays bounded however
//! many runs the logs hold (SPEC §8: ten million runs within 4 GB). Two passes. The
//! first validates every row and reads the claims files, so every problem is
//! reported before any output is written, and counts what the audit needs to know
//! about all runs before it can audit one ([`AuditScope`]: claims for
//! `--familywise`, runs per held-out split for K). [`PreparedAudit::check`] then
//! checks the settings against the runs and decides the claims (from the few runs
//! they name). The second pass audits batch by batch and hands each batch of results
//! to a sink: [`PreparedAudit::collect`] keeps every run (the in-memory document),
//! [`PreparedAudit::keep_worst`] the ones a table shows, [`PreparedAudit::stream`]
//! none (a writer of JSON lines takes them). Whatever the sink, the summary, the
//! claims and the split entries are finished the same way, so every path reports
//! them. When the runs fit in [`StreamLimits::hold_runs`], the first pass keeps them
//! and the logs are not validated twice.
//!
//! Every run's result depends only on the run, the scope and the settings, so the
//! results do not depend on the batch size or on the sink (tests/it/streaming.rs).

use std::io;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::mpsc;

use rayon::prelude::*;

use crate::audit::claims::{evaluate_claims, ClaimResult};
use crate::audit::splits::{SplitAccumulator, SplitEntry};
use crate::audit::{AuditScope, AuditSettings, Auditor, RunResult, Summary, Verdict};
use crate::claim::{ClaimInput, PatternIndex};
use crate::error::Error;
use crate::ingest::claims::{read_claims, ClaimsRead, ClaimsSource};
use crate::ingest::{
    self, Collected, FileProgress, IngestSettings, InputFile, LogSource, LogSummary, OpenedLog,
    SkippedFile, SkippedRow,
};
use crate::report::document::{AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};
use crate::run::{IdKey, RowDecisions, RunInput};

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
            batch_rows: 1 << 15,
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
    /// The claims files read, and their rows' own problems.
    claims: ClaimsRead,
    /// The claims decided, once [`PreparedAudit::check`] has run.
    claim_results: Option<Vec<ClaimResult>>,
    /// Whether the second pass builds the split entries (see
    /// [`PreparedAudit::without_splits`]).
    splits: bool,
}

/// What one log's first pass produced.
struct FirstPass {
    report: ingest::FileReport,
    scope: AuditScope,
    runs: usize,
    held: Option<Vec<Vec<RunInput>>>,
    /// Keys of the runs not held (log index 0: set when the logs are merged).
    keys: Vec<IdKey>,
}

/// The keys of runs (of log 0) for finding copies in a stream.
fn keys_of(runs: &[RunInput]) -> impl Iterator<Item = IdKey> + '_ {
    runs.iter().filter_map(|run| IdKey::of(run, 0))
}

/// The first pass over the logs found at `paths` (files or folders), with the claims
/// files of `settings`.
pub fn prepare_paths(
    paths: &[PathBuf],
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'static>, Error> {
    prepare_discovered(&ingest::discover(paths)?, settings, limits, progress)
}

/// The first pass over the logs `discovery` found, with the claims files of
/// `settings`.
pub fn prepare_discovered(
    discovery: &ingest::Discovery,
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'static>, Error> {
    let sources: Vec<LogSource<'static>> =
        discovery.logs.iter().map(ingest::LogFile::source).collect();
    let claims: Vec<ClaimsSource<'static>> = settings
        .claims_files
        .iter()
        .map(|path| ClaimsSource::Path(path.clone()))
        .collect();
    let mut prepared = prepare(&sources, &claims, settings, limits, progress)?;
    prepared
        .skipped_files
        .extend(ingest::not_log_files(discovery));
    Ok(prepared)
}

/// The first pass over the given log sources, and the claims files `claims`: open,
/// validate and count every run, read every claim. Fails with the problems of both,
/// so that a user sees them all at once.
pub fn prepare<'a>(
    sources: &[LogSource<'a>],
    claims: &[ClaimsSource<'_>],
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'a>, Error> {
    let started = std::time::Instant::now();
    let logs = first_pass(sources, settings, limits, progress);
    crate::timing::phase("first pass", started);
    let claims = read_claims(
        claims,
        settings.percent,
        crate::ingest::formats::Delimited::of(settings),
    );
    match (logs, claims) {
        (Ok(mut prepared), Ok(claims)) => {
            prepared.scope.add_claims(claims.claims.len() as u64);
            prepared.claims = claims;
            Ok(prepared)
        }
        (Err(Error::Input(mut problems)), Err(Error::Input(more))) => {
            problems.extend(more);
            Err(Error::Input(problems))
        }
        (Err(error), _) | (_, Err(error)) => Err(error),
    }
}

/// The first pass over the logs: open, validate and count every run.
fn first_pass<'a>(
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
                !settings.cancel.is_cancelled()
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
    let mut keys: Vec<IdKey> = Vec::new();
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
            keys.extend(pass.keys.into_iter().map(|key| IdKey { log, ..key }));
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
        // Too many runs to hold: the runs whose identifier hash repeats (usually none)
        // are read again and compared, and the scope is counted again without the
        // copies (a third reading, only when there are any).
        let repeated = crate::run::repeated_ids(keys);
        let mut candidates: Vec<((u32, u64), RunInput)> = Vec::new();
        if !repeated.is_empty() {
            reread(
                &logs,
                &usable,
                settings,
                limits,
                &ingest::FileCopies::default(),
                &std::collections::BTreeMap::new(),
                &mut |log, batch| {
                    for run in batch {
                        if let Some(key) = IdKey::of(&run, log) {
                            if repeated.binary_search(&(log, key.row)).is_ok() {
                                candidates.push(((log, key.row), run));
                            }
                        }
                    }
                    true
                },
            );
        }
        let (decisions, set_aside) = crate::run::decide_copies(&candidates);
        drop(candidates);
        stream_copies = decisions;
        if set_aside > 0 {
            copies_set_aside += set_aside;
            runs -= set_aside;
            scope = AuditScope::default();
            reread(
                &logs,
                &usable,
                settings,
                limits,
                &ingest::FileCopies::default(),
                &stream_copies,
                &mut |_, batch| {
                    for run in &batch {
                        scope.observe(run);
                    }
                    true
                },
            );
            if settings.cancel.is_cancelled() {
                return Err(Error::Interrupted);
            }
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
        claims: ClaimsRead::default(),
        claim_results: None,
        splits: true,
    })
}

/// Which of the runs' identifiers the claims name: exactly (a run or a baseline), or
/// by pattern. Only those runs are kept for deciding the claims.
struct ClaimNames {
    exact: foldhash::HashSet<String>,
    patterns: PatternIndex,
}

impl ClaimNames {
    fn of(claims: &[ClaimInput]) -> ClaimNames {
        let mut exact = foldhash::HashSet::default();
        let mut patterns = Vec::new();
        for claim in claims {
            if claim.is_pattern() {
                patterns.push(claim.run.as_str());
            } else {
                exact.insert(claim.run.clone());
            }
            exact.extend(claim.baseline.iter().cloned());
        }
        patterns.sort_unstable();
        patterns.dedup();
        ClaimNames {
            exact,
            patterns: PatternIndex::new(&patterns),
        }
    }

    fn names(&self, run: &str) -> bool {
        self.exact.contains(run) || self.patterns.matches_any(run)
    }
}

/// Reads the usable logs again, batch by batch in input order, with copies named and
/// set aside as the first pass decided, handing each non-empty batch (and the index
/// of its log) to `each` until it returns false (a log whose table was dropped is
/// opened again).
fn reread(
    logs: &[PassedLog<'_>],
    usable: &[bool],
    settings: &IngestSettings,
    limits: StreamLimits,
    file_copies: &ingest::FileCopies,
    stream_copies: &std::collections::BTreeMap<u32, RowDecisions>,
    each: &mut dyn FnMut(u32, Vec<RunInput>) -> bool,
) {
    let labels: Vec<String> = logs
        .iter()
        .map(|log| ingest::source_label(&log.source))
        .collect();
    let sources = |log: u32, row: u64| {
        let label = &labels[log as usize];
        let mut sources = vec![format!("{label}:{row}")];
        sources.extend(file_copies.copies_at(label, row));
        sources
    };
    for (index, (passed, &usable)) in logs.iter().zip(usable).enumerate() {
        if !usable {
            continue;
        }
        let decisions = u32::try_from(index)
            .ok()
            .and_then(|index| stream_copies.get(&index));
        let file_settings = settings.for_file(&labels[index]);
        let reopened;
        let log = match &passed.table {
            Some(table) => table,
            None => {
                reopened = OpenedLog::open(&passed.source, &file_settings);
                &reopened
            }
        };
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
            stopped = !each(index as u32, batch) || settings.cancel.is_cancelled();
            !stopped
        });
        if stopped {
            return;
        }
    }
}

/// What the second pass hands to a sink's caller besides the runs it kept.
struct Finished {
    summary: Summary,
    splits: Vec<SplitEntry>,
}

impl PreparedAudit<'_> {
    /// The second pass leaves the split entries out (the document's `splits` is
    /// empty): a stream of JSON lines or CSV writes none, and following every run
    /// of a split through its wear history costs the serial counting stage a few
    /// allocations per run.
    pub fn without_splits(mut self) -> Self {
        self.splits = false;
        self
    }

    /// Runs that will be audited.
    pub fn runs(&self) -> usize {
        self.runs
    }

    /// Checks that the audit settings fit the runs (see [`AuditScope::check`]) and
    /// decides the claims of the claims files; fails with every problem of the claims
    /// (their own and those of joining them to the runs). Call it before writing
    /// anything: the second pass calls it if the caller did not.
    pub fn check(&mut self, audit_settings: &AuditSettings) -> Result<(), Error> {
        if self.claim_results.is_some() {
            return Ok(());
        }
        self.scope.check(audit_settings)?;
        let mut problems = std::mem::take(&mut self.claims.problems);
        let results = if self.claims.claims.is_empty() {
            Vec::new()
        } else {
            let named = self.named_runs()?;
            let auditor = Auditor::new(&self.scope, audit_settings);
            let runs = auditor.audit(named);
            let delta = self.scope.delta(audit_settings);
            match evaluate_claims(&self.claims.claims, &runs, audit_settings, delta) {
                Ok(results) => results,
                Err(more) => {
                    let more = self.suggest_runs(more, &runs)?;
                    problems.extend(more.into_iter().map(crate::error::Problem::of_claims_file));
                    Vec::new()
                }
            }
        };
        if !problems.is_empty() {
            // In row order, file by file, whichever step found them.
            let inputs = &self.claims.inputs;
            let file_order = |file: &str| inputs.iter().position(|input| input.path == file);
            problems.sort_by_key(|problem| (file_order(&problem.file), problem.row));
            return Err(Error::Input(problems));
        }
        self.claim_results = Some(results);
        Ok(())
    }

    /// Adds "did you mean" to the problems of claims whose run or baseline matches no
    /// run: the closest identifier in the logs (at most two edits, or the same name in
    /// another case). Only on this failure path are all identifiers read again.
    fn suggest_runs(
        &self,
        mut problems: Vec<crate::error::Problem>,
        named: &[RunResult],
    ) -> Result<Vec<crate::error::Problem>, Error> {
        let unmatched_message =
            |column: &str, name: &str| format!("{column} `{name}` matches no run in the logs");
        let mut missing: Vec<String> = Vec::new();
        for claim in &self.claims.claims {
            let names = std::iter::once(("run", &claim.run))
                .filter(|_| !claim.is_pattern())
                .chain(claim.baseline.iter().map(|b| ("baseline", b)));
            for (column, name) in names {
                let message = unmatched_message(column, name);
                if problems.iter().any(|p| p.message == message)
                    && !named.iter().any(|run| &run.run == name)
                    && !missing.contains(name)
                {
                    missing.push(name.clone());
                }
            }
        }
        if missing.is_empty() {
            return Ok(problems);
        }
        // (distance, suggestion) per missing name.
        let mut closest: Vec<Option<(usize, String)>> = vec![None; missing.len()];
        let mut look = |batch: &[RunInput]| {
            for run in batch {
                for (name, best) in missing.iter().zip(closest.iter_mut()) {
                    let length_gap = run.run.chars().count().abs_diff(name.chars().count());
                    if length_gap > 2 {
                        continue;
                    }
                    let distance = if run.run.to_lowercase() == name.to_lowercase() {
                        0
                    } else {
                        crate::suggest::edit_distance(name, &run.run)
                    };
                    if distance <= 2
                        && distance < name.chars().count()
                        && best.as_ref().map_or(true, |(known, _)| distance < *known)
                    {
                        *best = Some((distance, run.run.clone()));
                    }
                }
            }
        };
        self.each_run_batch(&mut look)?;
        for (name, best) in missing.iter().zip(closest) {
            let Some((_, suggestion)) = best else {
                continue;
            };
            for column in ["run", "baseline"] {
                let message = unmatched_message(column, name);
                for problem in problems.iter_mut().filter(|p| p.message == message) {
                    problem.message = format!("{message} (did you mean `{suggestion}`?)");
                }
            }
        }
        Ok(problems)
    }

    /// The runs the claims name, in input order (from the held runs, or read again).
    fn named_runs(&self) -> Result<Vec<RunInput>, Error> {
        let names = ClaimNames::of(&self.claims.claims);
        let mut named = Vec::new();
        let mut pick = |batch: &[RunInput]| {
            let picked: Vec<RunInput> = batch
                .par_iter()
                .filter(|run| names.names(&run.run))
                .cloned()
                .collect();
            named.extend(picked);
        };
        self.each_run_batch(&mut pick)?;
        Ok(named)
    }

    /// Hands every batch of runs to `each`, in input order, before the second pass:
    /// the held batches, or the logs read again.
    fn each_run_batch(&self, each: &mut dyn FnMut(&[RunInput])) -> Result<(), Error> {
        match &self.held {
            Some(batches) => batches.iter().for_each(|batch| each(batch)),
            None => reread(
                &self.logs,
                &self.usable,
                &self.settings,
                self.limits,
                &self.file_copies,
                &self.stream_copies,
                &mut |_, batch| {
                    each(&batch);
                    true
                },
            ),
        }
        if self.settings.cancel.is_cancelled() {
            return Err(Error::Interrupted);
        }
        Ok(())
    }

    /// Audits every run and keeps them all, with their finding sentences: the
    /// document every report format can be written from.
    pub fn collect(mut self, audit_settings: &AuditSettings) -> Result<AuditDocument, Error> {
        self.check(audit_settings)?;
        let mut runs: Vec<RunResult> = Vec::with_capacity(self.runs);
        let meta = self.take_meta();
        let finished = self.second_pass(
            audit_settings,
            &meta.claims,
            true,
            &|batch| batch,
            &mut |batch| {
                runs.extend(batch);
                Ok(())
            },
        )?;
        Ok(meta.document(audit_settings, runs, finished))
    }

    /// Audits every run but keeps only the `keep` worst of those whose verdict is in
    /// `only` (all when empty), in the order of [`crate::audit::result::worst_first`],
    /// with their sentences written: the document of a human-readable report of a
    /// long audit, whose summary, claims and splits still count every run. Memory
    /// holds the runs of a few batches and the ones kept, however many runs the logs
    /// hold.
    pub fn keep_worst(
        mut self,
        audit_settings: &AuditSettings,
        keep: usize,
        only: &[Verdict],
    ) -> Result<AuditDocument, Error> {
        self.check(audit_settings)?;
        let meta = self.take_meta();
        let mut kept: Vec<RunResult> = Vec::new();
        let order = crate::audit::result::worst_first;
        // Each batch is narrowed to its own `keep` worst on the counting stage, so
        // the caller's thread only merges.
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
        let finished =
            self.second_pass(audit_settings, &meta.claims, false, &narrow, &mut |batch| {
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
            run.explanation = crate::audit::explain::explanation(run);
            crate::audit::explain::fill_messages(run, audit_settings);
        }
        Ok(meta.document(audit_settings, kept, finished))
    }

    /// Audits every run, handing each batch of results (in input order; findings
    /// with codes only and no explanation unless `messages`) to `transform` on a thread of its own (say,
    /// formatting JSON lines) and its output to `sink` on the caller's thread (say,
    /// writing them out). Returns the document without runs: its summary, claims and
    /// splits count every run. An error of `sink` stops the audit and is returned as
    /// [`Error::Io`].
    pub fn stream<T: Send>(
        mut self,
        audit_settings: &AuditSettings,
        messages: bool,
        transform: &(dyn Fn(Vec<RunResult>) -> T + Sync),
        sink: &mut dyn FnMut(T) -> io::Result<()>,
    ) -> Result<AuditDocument, Error> {
        self.check(audit_settings)?;
        let meta = self.take_meta();
        let finished = self.second_pass(audit_settings, &meta.claims, messages, transform, sink)?;
        Ok(meta.document(audit_settings, Vec::new(), finished))
    }

    /// What the document takes from the first pass (the rest drives the second).
    fn take_meta(&mut self) -> Meta {
        Meta {
            inputs: std::mem::take(&mut self.inputs),
            skipped_rows: std::mem::take(&mut self.skipped_rows),
            skipped_files: std::mem::take(&mut self.skipped_files),
            notes: std::mem::take(&mut self.notes),
            claims: self.claim_results.take().unwrap_or_default(),
            claim_files: std::mem::take(&mut self.claims.inputs),
            settings: self.settings.clone(),
            rows_in_skipped_files: self.rows_in_skipped_files,
            copies_set_aside: self.copies_set_aside,
        }
    }

    /// The second pass: audits every run, batch by batch in input order. Three
    /// stages overlap: one thread reads and validates the next batch, another audits
    /// the current one, a third counts it (summary, splits) and turns it into `T`, and
    /// this thread hands the previous one to `sink` (the writer stays on the caller's
    /// thread, so `sink` need not be `Send`). `claims` are the claims decided by
    /// [`PreparedAudit::check`] (split entries use those on a best run).
    fn second_pass<T: Send>(
        self,
        audit_settings: &AuditSettings,
        claims: &[ClaimResult],
        messages: bool,
        transform: &(dyn Fn(Vec<RunResult>) -> T + Sync),
        sink: &mut dyn FnMut(T) -> io::Result<()>,
    ) -> Result<Finished, Error> {
        let mut auditor = Auditor::new(&self.scope, audit_settings);
        if !messages {
            auditor = auditor.codes_only();
        }
        let delta = self.scope.delta(audit_settings);
        let PreparedAudit {
            logs,
            usable,
            held,
            settings,
            limits,
            file_copies,
            stream_copies,
            splits: with_splits,
            ..
        } = self;
        let cancel = settings.cancel.clone();
        // One batch in flight per stage bounds the memory to a few batches.
        let (inputs_out, inputs_in) = mpsc::sync_channel::<Vec<RunInput>>(1);
        let (results_out, results_in) = mpsc::sync_channel::<Vec<RunResult>>(1);
        let (done_out, done_in) = mpsc::sync_channel::<T>(1);
        let (written, counted) = std::thread::scope(|scope| {
            let reader_cancel = &cancel;
            scope.spawn(move || match held {
                Some(batches) => {
                    for batch in batches {
                        if reader_cancel.is_cancelled() || inputs_out.send(batch).is_err() {
                            return;
                        }
                    }
                }
                None => reread(
                    &logs,
                    &usable,
                    &settings,
                    limits,
                    &file_copies,
                    &stream_copies,
                    &mut |_, batch| inputs_out.send(batch).is_ok(),
                ),
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
                let mut splits = SplitAccumulator::default();
                for results in results_in {
                    for result in &results {
                        summary.count(result, &audit_settings.gate_allow);
                        if with_splits {
                            splits.observe(result);
                        }
                    }
                    if done_out.send(transform(results)).is_err() {
                        break;
                    }
                }
                (summary, splits)
            });
            // On an error the channels close and the other stages stop.
            let written = done_in.into_iter().try_for_each(&mut *sink);
            // The counting stage only panics if `transform` does: pass that on.
            let counted = counter
                .join()
                .unwrap_or_else(|panic| std::panic::resume_unwind(panic));
            (written, counted)
        });
        written.map_err(|error| Error::Io(error.to_string()))?;
        if cancel.is_cancelled() {
            return Err(Error::Interrupted);
        }
        let (summary, splits) = counted;
        Ok(Finished {
            summary,
            splits: splits.finish_with_claims(audit_settings, delta, claims),
        })
    }
}

/// What the document of an audit takes from its first pass.
struct Meta {
    inputs: Vec<InputFile>,
    skipped_rows: Vec<SkippedRow>,
    skipped_files: Vec<SkippedFile>,
    notes: Vec<String>,
    claims: Vec<ClaimResult>,
    claim_files: Vec<InputFile>,
    settings: IngestSettings,
    rows_in_skipped_files: usize,
    copies_set_aside: usize,
}

impl Meta {
    /// The document: the summary finished (rows, claims, the gate) the same way for
    /// every sink.
    fn document(
        self,
        audit_settings: &AuditSettings,
        runs: Vec<RunResult>,
        finished: Finished,
    ) -> AuditDocument {
        let Finished {
            mut summary,
            splits,
        } = finished;
        for claim in &self.claims {
            summary.count_claim(claim.verdict, &claim.findings, &audit_settings.gate_allow);
        }
        summary.rows_skipped = self.skipped_rows.len() + self.rows_in_skipped_files;
        summary.claims_skipped = self
            .skipped_rows
            .iter()
            .filter(|row| row.carries_claim)
            .count()
            + self
                .skipped_files
                .iter()
                .filter(|file| file.carries_claims)
                .count();
        summary.copies_set_aside = self.copies_set_aside;
        summary.rows_read = summary.runs + summary.rows_skipped + self.copies_set_aside;
        summary.files_skipped = self.skipped_files.len();
        summary.apply_gate(audit_settings.gate);
        AuditDocument {
            tool: ToolInfo::current(),
            generated_at: crate::report::document::now_rfc3339(),
            settings: DocumentSettings::new(audit_settings, &self.settings),
            inputs: self.inputs,
            runs,
            claims: self.claims,
            claim_files: self.claim_files,
            splits,
            summary,
            skipped_rows: self.skipped_rows,
            skipped_files: self.skipped_files,
            cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
            notes: self.notes,
        }
    }
}
