//! One entry point per command. Each validates its raw flags into settings, calls the
//! library, and writes the output; `main` maps the outcome to an exit code.

use std::io::{self, IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use serde_json::json;

use crate::audit::{AuditSettings, Gate, GateResult, HoldoutBound};
use crate::cli::{
    AuditOptions, BoundArg, Cli, Command, FamilyArgs, GateArg, GrowthArgs, PlanCommand,
    PlanHoldoutArgs, PlanTrainArgs, ReportFormatArg, SimpleFormatArg,
};
use crate::ingest::{columns, IngestError, IngestSettings, SkippedFile, SkippedRow};
use crate::pipeline::StreamLimits;
use crate::report::{self, AuditDocument, OutputFormat};
use crate::theory::growth::{self, Family, FamilyParams};
use crate::theory::{sample_size, vc};

/// How a command ended, when it did not fail.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// Exit 0.
    Pass,
    /// Exit 1: the gate failed, or `verify` found drift.
    Fail,
}

/// Why a command could not complete (exit 2).
#[derive(Debug)]
pub struct AppError(pub String);

impl std::fmt::Display for AppError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl From<IngestError> for AppError {
    fn from(error: IngestError) -> Self {
        AppError(error.to_string())
    }
}

/// Terminal manners shared by every command.
#[derive(Clone, Copy, Debug)]
pub struct Terminal {
    pub quiet: bool,
    pub verbose: bool,
}

/// Runs the parsed command line.
pub fn run(cli: Cli) -> Result<Outcome, AppError> {
    let terminal = Terminal {
        quiet: cli.quiet,
        verbose: cli.verbose,
    };
    match cli.command {
        Command::Audit(args) => {
            let sources = SourceSpec::Paths(args.paths);
            run_audit(&sources, &args.options, terminal)
        }
        Command::Demo(options) => run_audit(&SourceSpec::Demo, &options, terminal),
        Command::Plan(PlanCommand::Holdout(args)) => run_plan_holdout(&args, terminal),
        Command::Plan(PlanCommand::Train(args)) => run_plan_train(&args, terminal),
        Command::Growth(args) => run_growth(&args, terminal),
        Command::Families(args) => run_families(args.format, terminal),
        Command::Verify(args) => {
            crate::certificate::run_verify(&args.certificate, args.format.format, terminal)
        }
    }
}

/// Where an audit's logs come from.
pub enum SourceSpec {
    Paths(Vec<PathBuf>),
    Demo,
}

/// Validates the audit flags.
pub fn resolve_settings(
    options: &AuditOptions,
) -> Result<(AuditSettings, IngestSettings), AppError> {
    if !(options.confidence > 0.0 && options.confidence < 1.0) {
        return Err(AppError(format!(
            "--confidence {} must be strictly between 0 and 1 (for example 0.95)",
            options.confidence
        )));
    }
    if !(options.tolerance > 0.0 && options.tolerance.is_finite()) {
        return Err(AppError(format!(
            "--tolerance {} must be positive",
            options.tolerance
        )));
    }
    if !(options.max_width > 0.0 && options.max_width.is_finite()) {
        return Err(AppError(format!(
            "--max-width {} must be positive",
            options.max_width
        )));
    }
    let scale = if options.percent { 100.0 } else { 1.0 };
    let default_claim_accuracy = match options.claim_accuracy {
        Some(claim) if (0.0..=scale).contains(&claim) => Some(claim / scale),
        Some(claim) => {
            return Err(AppError(format!(
                "--claim-accuracy {claim} is outside [0, {scale}]{}",
                if options.percent {
                    ""
                } else {
                    " (pass --percent for percentages)"
                }
            )))
        }
        None => None,
    };
    let mut column_map = Vec::new();
    if let Some(path) = &options.map_file {
        let text = std::fs::read_to_string(path).map_err(|error| {
            AppError(format!(
                "{}: cannot read the map file ({})",
                path.display(),
                crate::ingest::discover::describe_io_error(&error)
            ))
        })?;
        column_map
            .extend(columns::parse_map_file(&path.display().to_string(), &text).map_err(AppError)?);
    }
    for pair in &options.map {
        column_map.push(columns::parse_map_pair(pair).map_err(AppError)?);
    }
    columns::check_column_map(&column_map).map_err(AppError)?;
    let audit = AuditSettings {
        confidence: options.confidence,
        holdout_bound: match options.holdout_bound {
            BoundArg::Binomial => HoldoutBound::Binomial,
            BoundArg::Hoeffding => HoldoutBound::Hoeffding,
        },
        familywise: options.familywise,
        same_holdout: options.same_holdout,
        tolerance: options.tolerance,
        max_width: options.max_width,
        gate: match options.gate {
            GateArg::Unproven => Gate::Unproven,
            GateArg::Refuted => Gate::Refuted,
            GateArg::Never => Gate::Never,
        },
    };
    let ingest = IngestSettings {
        percent: options.percent,
        lenient: options.lenient,
        column_map,
        default_claim_accuracy,
    };
    Ok((audit, ingest))
}

fn output_format(format: ReportFormatArg) -> OutputFormat {
    match format {
        ReportFormatArg::Table => OutputFormat::Table,
        ReportFormatArg::Json => OutputFormat::Json,
        ReportFormatArg::Ndjson => OutputFormat::Ndjson,
        ReportFormatArg::Csv => OutputFormat::Csv,
        ReportFormatArg::Parquet => OutputFormat::Parquet,
        ReportFormatArg::Markdown => OutputFormat::Markdown,
    }
}

/// `gapcert audit` and `gapcert demo`: read, audit, report, gate.
pub fn run_audit(
    spec: &SourceSpec,
    options: &AuditOptions,
    terminal: Terminal,
) -> Result<Outcome, AppError> {
    let (audit_settings, ingest_settings) = resolve_settings(options)?;
    let format = output_format(options.format);
    // Check every destination before writing any, so a failing command leaves no
    // output file behind.
    for path in [&options.output, &options.certificate, &options.html]
        .into_iter()
        .flatten()
    {
        check_destination(path)?;
    }
    if format.is_binary() && options.output.is_none() && io::stdout().is_terminal() {
        return Err(AppError(
            "--format parquet writes binary data: add --output FILE (or redirect standard output)"
                .into(),
        ));
    }
    if matches!(format, OutputFormat::Ndjson | OutputFormat::Csv)
        && options.html.is_none()
        && options.certificate.is_none()
    {
        return run_streaming_audit(spec, options, &audit_settings, &ingest_settings, terminal);
    }
    let progress = Progress::start(terminal, "reading logs");
    let result = match spec {
        SourceSpec::Paths(paths) => crate::audit_paths_reporting(
            paths,
            &audit_settings,
            &ingest_settings,
            &|done, total| progress.file_read(done, total),
        ),
        SourceSpec::Demo => {
            crate::audit_sources(&crate::demo::sources(), &audit_settings, &ingest_settings)
        }
    };
    progress.finish();
    let doc = result?;
    list_skipped(terminal, &doc.skipped_files, &doc.skipped_rows);

    if let Some(path) = &options.certificate {
        let paths: Vec<String> = match spec {
            SourceSpec::Paths(paths) => paths.iter().map(|p| p.display().to_string()).collect(),
            SourceSpec::Demo => Vec::new(),
        };
        crate::certificate::write_certificate(path, &doc, &paths)?;
    }
    if let Some(path) = &options.html {
        write_file(path, |out| report::html::write_html(&doc, out))?;
    }
    let started = std::time::Instant::now();
    emit_report(&doc, format, options.output.as_deref(), terminal)?;
    crate::timing("write", started);
    Ok(match doc.summary.gate {
        GateResult::Pass => Outcome::Pass,
        GateResult::Fail => Outcome::Fail,
    })
}

/// With `-v`, names every skipped file and row on stderr.
fn list_skipped(terminal: Terminal, files: &[SkippedFile], rows: &[SkippedRow]) {
    if !terminal.verbose || terminal.quiet {
        return;
    }
    use crate::report::table::printable;
    for skipped in files {
        eprintln!(
            "skipped {}: {}",
            printable(&skipped.path),
            printable(&skipped.reason)
        );
    }
    for skipped in rows {
        eprintln!(
            "skipped {}: {}",
            printable(&skipped.source),
            printable(&skipped.reasons.join("; "))
        );
    }
}

/// An audit whose only output is JSON lines or CSV: streamed batch by batch
/// ([`crate::pipeline`]), so memory stays bounded and the output is the same as the
/// in-memory audit's.
fn run_streaming_audit(
    spec: &SourceSpec,
    options: &AuditOptions,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
    terminal: Terminal,
) -> Result<Outcome, AppError> {
    let format = output_format(options.format);
    let limits = StreamLimits::default();
    let progress = Progress::start(terminal, "reading logs");
    let report_file = |done, total| progress.file_read(done, total);
    let demo_sources;
    let prepared = match spec {
        SourceSpec::Paths(paths) => {
            crate::pipeline::prepare_paths(paths, ingest_settings, limits, &report_file)
        }
        SourceSpec::Demo => {
            demo_sources = crate::demo::sources();
            crate::pipeline::prepare(&demo_sources, ingest_settings, limits, &report_file)
        }
    };
    let prepared = match prepared {
        Ok(prepared) => prepared,
        Err(error) => {
            progress.finish();
            return Err(error.into());
        }
    };
    list_skipped(terminal, &prepared.skipped_files, &prepared.skipped_rows);
    progress.auditing(prepared.runs());
    let started = std::time::Instant::now();
    let mut summary = None;
    let stream = |out: &mut dyn Write| -> io::Result<()> {
        if format == OutputFormat::Csv {
            report::flat::write_csv_header(out)?;
        }
        // Lines are formatted on a stage of their own, so this thread only copies
        // bytes out while the next batches are audited and formatted.
        let format_batch = |runs: Vec<crate::audit::RunResult>| {
            let lines = match format {
                OutputFormat::Csv => report::flat::format_csv_rows(&runs),
                _ => report::flat::format_ndjson(&runs),
            };
            (runs.len(), lines)
        };
        // A reader that stops early (`| head`) ends the output, not the audit: the
        // gate still needs every run.
        let mut closed = false;
        let mut sink = |(runs, buffers): (usize, Vec<io::Result<Vec<u8>>>)| -> io::Result<()> {
            progress.audited(runs);
            if closed {
                return Ok(());
            }
            let written = buffers
                .into_iter()
                .try_for_each(|buffer| out.write_all(&buffer?));
            match written {
                Err(error) if error.kind() == io::ErrorKind::BrokenPipe => {
                    closed = true;
                    Ok(())
                }
                other => other,
            }
        };
        summary = Some(prepared.audit_through(audit_settings, false, &format_batch, &mut sink)?);
        Ok(())
    };
    let written = match &options.output {
        Some(path) => write_file(path, stream),
        None if terminal.quiet => {
            stream(&mut io::sink()).map_err(|error| AppError(error.to_string()))
        }
        None => write_stdout(stream),
    };
    progress.finish();
    written?;
    crate::timing("audit + write", started);
    Ok(match summary.map(|s| s.gate) {
        Some(GateResult::Pass) => Outcome::Pass,
        _ => Outcome::Fail,
    })
}

/// Fails early when an output file cannot be created: its folder is missing or is not
/// a folder, or the path is a folder.
fn check_destination(path: &Path) -> Result<(), AppError> {
    let folder = match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    if !folder.is_dir() {
        return Err(AppError(format!(
            "{}: cannot write (the folder {} does not exist); nothing was written",
            path.display(),
            folder.display()
        )));
    }
    if path.is_dir() {
        return Err(AppError(format!(
            "{}: cannot write (it is a folder); nothing was written",
            path.display()
        )));
    }
    Ok(())
}

/// Writes a file atomically, naming it in any error.
pub fn write_file<F>(path: &Path, write: F) -> Result<(), AppError>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    report::write_atomically(path, write).map_err(|error| {
        AppError(format!(
            "{}: cannot write ({}); nothing was written there",
            path.display(),
            crate::ingest::discover::describe_io_error(&error)
        ))
    })
}

fn emit_report(
    doc: &AuditDocument,
    format: OutputFormat,
    output: Option<&Path>,
    terminal: Terminal,
) -> Result<(), AppError> {
    match output {
        Some(path) => write_file(path, |out| {
            report::write_report(doc, format, out, false, None)
        }),
        None if terminal.quiet => Ok(()),
        None => {
            let on_terminal = io::stdout().is_terminal();
            let color = on_terminal && std::env::var_os("NO_COLOR").is_none();
            // comfy-table asks the terminal for its size (stdout is the terminal here).
            let width = if on_terminal {
                comfy_table::Table::new().width()
            } else {
                None
            };
            write_stdout(|out| report::write_report(doc, format, out, color, width))
        }
    }
}

/// Writes to standard output; a closed pipe (`| head`) is a normal end.
pub fn write_stdout<F>(write: F) -> Result<(), AppError>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    let stdout = io::stdout();
    let mut out = io::BufWriter::with_capacity(1 << 16, stdout.lock());
    let result = write(&mut out).and_then(|_| out.flush());
    match result {
        Ok(()) => Ok(()),
        Err(error) if error.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        Err(error) => Err(AppError(format!(
            "cannot write to standard output ({error})"
        ))),
    }
}

/// A spinner on stderr that appears only if the work takes more than about a second,
/// only on a terminal, and never with `--quiet`.
pub struct Progress {
    bar: Option<ProgressBar>,
}

impl Progress {
    pub fn start(terminal: Terminal, message: &str) -> Progress {
        if terminal.quiet || !io::stderr().is_terminal() {
            return Progress { bar: None };
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
        bar.set_style(
            ProgressStyle::with_template("{spinner} {msg} ({elapsed})")
                .unwrap_or_else(|_| ProgressStyle::default_spinner()),
        );
        bar.set_message(message.to_string());
        let delayed = bar.clone();
        std::thread::spawn(move || {
            std::thread::sleep(Duration::from_millis(1000));
            if !delayed.is_finished() {
                delayed.set_draw_target(ProgressDrawTarget::stderr());
                delayed.enable_steady_tick(Duration::from_millis(120));
            }
        });
        Progress { bar: Some(bar) }
    }

    /// After each file: with several files, the spinner becomes a bar of files read
    /// (the audit and the report follow the last file).
    pub fn file_read(&self, done: usize, total: usize) {
        let Some(bar) = &self.bar else { return };
        if total > 1 {
            if bar.length() != Some(total as u64) {
                bar.set_length(total as u64);
                bar.set_style(
                    ProgressStyle::with_template(
                        "{bar:30} {pos}/{len} files read ({elapsed}) {msg}",
                    )
                    .unwrap_or_else(|_| ProgressStyle::default_bar()),
                );
            }
            bar.set_position(done as u64);
        }
        if done == total {
            bar.set_message("auditing");
        }
    }

    /// The audit proper starts (streaming audits, which know how many runs there
    /// are): the spinner becomes a bar of runs audited.
    pub fn auditing(&self, total_runs: usize) {
        let Some(bar) = &self.bar else { return };
        bar.set_length(total_runs as u64);
        bar.set_position(0);
        bar.set_style(
            ProgressStyle::with_template(
                "{bar:30} {human_pos}/{human_len} runs audited ({elapsed}, about {eta} left)",
            )
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar.set_message("");
    }

    /// `runs` more runs are audited and written.
    pub fn audited(&self, runs: usize) {
        if let Some(bar) = &self.bar {
            bar.inc(runs as u64);
        }
    }

    pub fn finish(self) {
        if let Some(bar) = self.bar {
            bar.finish_and_clear();
        }
    }
}

fn family_from_args(args: &FamilyArgs) -> Result<Family, AppError> {
    let params = FamilyParams {
        dim: args.dim,
        vc_dim: args.vc_dim,
        size: args.size,
        weights: args.weights,
        layers: args.layers,
        units: args.units,
        leaves: args.leaves,
        features: args.features,
    };
    match growth::resolve(&args.family, &params) {
        Ok(Some(family)) => Ok(family),
        Ok(None) => Err(AppError(format!(
            "--family {}: unknown family; `gapcert families` lists the known ones",
            args.family
        ))),
        Err(error) => Err(AppError(format!(
            "--{}: {}",
            error.parameter.replace('_', "-"),
            error.message
        ))),
    }
}

fn check_confidence(confidence: f64) -> Result<f64, AppError> {
    if confidence > 0.0 && confidence < 1.0 {
        Ok(crate::ingest::decimal::complement(confidence))
    } else {
        Err(AppError(format!(
            "--confidence {confidence} must be strictly between 0 and 1"
        )))
    }
}

/// `gapcert plan holdout`.
pub fn run_plan_holdout(args: &PlanHoldoutArgs, terminal: Terminal) -> Result<Outcome, AppError> {
    let delta = check_confidence(args.confidence)?;
    if !(0.0..=1.0).contains(&args.error_rate) {
        return Err(AppError(format!(
            "--error-rate {} is outside [0, 1]",
            args.error_rate
        )));
    }
    if !(0.0..=1.0).contains(&args.claim_accuracy) {
        return Err(AppError(format!(
            "--claim-accuracy {} is outside [0, 1]",
            args.claim_accuracy
        )));
    }
    if args.candidates == 0 {
        return Err(AppError("--candidates must be at least 1".into()));
    }
    let claim = crate::ingest::decimal::complement(args.claim_accuracy);
    let alpha = delta / args.candidates as f64;
    let binomial = sample_size::holdout_needed_binomial(args.error_rate, claim, alpha);
    let hoeffding = sample_size::holdout_needed_hoeffding(args.error_rate, claim, alpha);
    if terminal.quiet {
        return Ok(Outcome::Pass);
    }
    match args.format.format {
        SimpleFormatArg::Json => write_stdout(|out| {
            serde_json::to_writer_pretty(
                &mut *out,
                &json!({
                    "error_rate": args.error_rate,
                    "claim_error_rate": claim,
                    "candidates": args.candidates,
                    "confidence": args.confidence,
                    "delta_per_run": alpha,
                    "holdout_needed_binomial": binomial,
                    "holdout_needed_hoeffding": hoeffding,
                }),
            )?;
            writeln!(out)
        }),
        SimpleFormatArg::Table => write_stdout(|out| {
            let show = |n: Option<u64>| {
                n.map(report::table::group_thousands)
                    .unwrap_or_else(|| "never (the error rate is not below the claim)".into())
            };
            writeln!(
                out,
                "To certify accuracy ≥ {} (error ≤ {}) at an observed error rate of {} with confidence {} and {} candidate(s) compared (δ/K = {:.3e}):",
                args.claim_accuracy,
                claim,
                args.error_rate,
                args.confidence,
                args.candidates,
                alpha
            )?;
            writeln!(
                out,
                "  exact binomial bound: {} held-out examples",
                show(binomial)
            )?;
            writeln!(
                out,
                "  Hoeffding bound:      {} held-out examples",
                show(hoeffding)
            )
        }),
    }?;
    Ok(Outcome::Pass)
}

/// `gapcert plan train`.
pub fn run_plan_train(args: &PlanTrainArgs, terminal: Terminal) -> Result<Outcome, AppError> {
    let delta = check_confidence(args.confidence)?;
    if !(args.tolerance > 0.0 && args.tolerance.is_finite()) {
        return Err(AppError(format!(
            "--tolerance {} must be positive",
            args.tolerance
        )));
    }
    let family = family_from_args(&args.family)?;
    let needed = vc::train_needed(&family, args.tolerance, delta);
    if terminal.quiet {
        return Ok(Outcome::Pass);
    }
    match args.format.format {
        SimpleFormatArg::Json => write_stdout(|out| {
            serde_json::to_writer_pretty(
                &mut *out,
                &json!({
                    "family": family.key(),
                    "vc_dim": family.vc_dim(),
                    "tolerance": args.tolerance,
                    "confidence": args.confidence,
                    "train_needed": needed,
                    "vc_allowance_at_train_needed": needed.map(|n| vc::allowance(&family, n, delta)),
                }),
            )?;
            writeln!(out)
        }),
        SimpleFormatArg::Table => write_stdout(|out| {
            match needed {
                Some(n) => writeln!(
                    out,
                    "{}: {} training examples make the VC allowance {:.6} ≤ {} at confidence {} (d_VC {}).",
                    family.key(),
                    report::table::group_thousands(n),
                    vc::allowance(&family, n, delta),
                    args.tolerance,
                    args.confidence,
                    family.vc_dim().map(|d| d.to_string()).unwrap_or_else(|| "not defined".into())
                ),
                None => writeln!(
                    out,
                    "{}: no training size up to 2^63 makes the VC allowance ≤ {}.",
                    family.key(),
                    args.tolerance
                ),
            }
        }),
    }?;
    Ok(Outcome::Pass)
}

/// `gapcert growth`.
pub fn run_growth(args: &GrowthArgs, terminal: Terminal) -> Result<Outcome, AppError> {
    let family = family_from_args(&args.family)?;
    if args.upto == 0 || args.upto > 100_000 {
        return Err(AppError(format!(
            "--upto {} must be between 1 and 100000",
            args.upto
        )));
    }
    let rows: Vec<(u64, num_bigint::BigUint, num_bigint::BigUint, f64)> = (1..=args.upto)
        .map(|n| {
            let exact = family.growth_exact(n);
            let power = num_bigint::BigUint::from(1u8) << n;
            (n, exact, power, family.ln_growth(n))
        })
        .collect();
    if let Some(path) = &args.svg {
        write_file(path, |out| {
            report::charts::write_growth_svg(&family, &rows, out)
        })?;
    }
    if terminal.quiet {
        return Ok(Outcome::Pass);
    }
    let number = |value: &num_bigint::BigUint| -> serde_json::Value {
        match u64::try_from(value) {
            Ok(small) => json!(small),
            Err(_) => json!(value.to_string()),
        }
    };
    match args.format.format {
        SimpleFormatArg::Json => write_stdout(|out| {
            let rows: Vec<serde_json::Value> = rows
                .iter()
                .map(|(n, exact, power, ln)| {
                    json!({"n": n, "growth": number(exact), "two_to_n": number(power), "growth_ln": ln})
                })
                .collect();
            serde_json::to_writer_pretty(
                &mut *out,
                &json!({
                    "family": family.key(),
                    "vc_dim": family.vc_dim(),
                    "break_point": family.break_point(),
                    "rows": rows,
                }),
            )?;
            writeln!(out)
        }),
        SimpleFormatArg::Table => write_stdout(|out| {
            let mut table = comfy_table::Table::new();
            table
                .load_preset(comfy_table::presets::UTF8_FULL_CONDENSED)
                .set_header(vec!["N", "m_H(N)", "2^N", "ln m_H(N)", ""]);
            for (n, exact, power, ln) in &rows {
                let mark = match family.break_point() {
                    Some(k) if k == *n => "← break point",
                    _ => "",
                };
                table.add_row(vec![
                    n.to_string(),
                    exact.to_string(),
                    power.to_string(),
                    format!("{ln:.6}"),
                    mark.to_string(),
                ]);
            }
            writeln!(out, "{table}")?;
            writeln!(
                out,
                "family {}: VC dimension {}, break point {}",
                family.key(),
                family
                    .vc_dim()
                    .map(|d| d.to_string())
                    .unwrap_or_else(|| "not defined".into()),
                family
                    .break_point()
                    .map(|k| k.to_string())
                    .unwrap_or_else(|| "none".into())
            )
        }),
    }?;
    Ok(Outcome::Pass)
}

/// `gapcert families`.
pub fn run_families(format: SimpleFormatArg, terminal: Terminal) -> Result<Outcome, AppError> {
    if terminal.quiet {
        return Ok(Outcome::Pass);
    }
    let catalogue = growth::catalogue();
    match format {
        SimpleFormatArg::Json => write_stdout(|out| {
            let list: Vec<serde_json::Value> = catalogue
                .iter()
                .map(|f| {
                    json!({"key": f.key, "parameters": f.parameters, "growth": f.growth_formula, "vc_dim": f.vc_dim, "source": f.source})
                })
                .collect();
            serde_json::to_writer_pretty(&mut *out, &list)?;
            writeln!(out)
        }),
        SimpleFormatArg::Table => write_stdout(|out| {
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
            for f in catalogue {
                table.add_row(vec![
                    f.key.to_string(),
                    f.parameters.join(", "),
                    f.growth_formula.to_string(),
                    f.vc_dim.to_string(),
                    f.source.to_string(),
                ]);
            }
            writeln!(out, "{table}")?;
            writeln!(out, "Any other family key: no growth bound (finding theory_unavailable); the held-out bounds are still computed.")
        }),
    }?;
    Ok(Outcome::Pass)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn progress_counts_runs_audited_against_the_total() {
        // A bar that draws nowhere (tests have no terminal on stderr).
        let progress = Progress {
            bar: Some(ProgressBar::hidden()),
        };
        progress.auditing(1_000);
        progress.audited(400);
        progress.audited(250);
        let bar = progress.bar.as_ref().expect("bar");
        assert_eq!(bar.length(), Some(1_000));
        assert_eq!(bar.position(), 650);
        progress.finish();
        // Without a terminal there is no bar, and the calls do nothing.
        let silent = Progress { bar: None };
        silent.auditing(10);
        silent.audited(10);
        silent.finish();
    }
}
