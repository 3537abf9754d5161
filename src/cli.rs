//! Command-line definitions (clap) only: raw flags as the user typed them.
//! `commands::settings` checks them into the library's settings; nothing downstream
//! reads these.

use std::path::PathBuf;

use clap::{Arg, ArgMatches, Args, FromArgMatches, Parser, Subcommand, ValueEnum};
use gapcert::theory::growth::{FamilyParams, FAMILY_PARAMETERS};

#[derive(Debug, Parser)]
#[command(
    name = "gapcert",
    version,
    about = "Audit machine-learning run logs: certify, or refuse to certify, the accuracy they claim",
    long_about = "gapcert reads experiment logs (CSV, TSV, Parquet, JSON lines, JSON, Arrow), bounds each run's true error from its held-out results (exact binomial or Hoeffding, corrected for the number of models compared on the same split) and from its training results (VC bound), and says whether each claim is certified, unproven or refuted.\n\nExit codes: 0 the gate passes, 1 the gate fails, 2 bad input or usage."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
    /// Print nothing but errors (the report still goes to --output files).
    #[arg(long, short = 'q', global = true, conflicts_with = "verbose")]
    pub quiet: bool,
    /// Say more: list skipped files and rows on stderr.
    #[arg(long, short = 'v', global = true)]
    pub verbose: bool,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Audit run logs (files or folders, searched recursively).
    Audit(AuditArgs),
    /// Audit the built-in demo logs (an invented scenario); exits 0 unless --gate is given.
    Demo(AuditFlags),
    /// Sample sizes needed to certify a claim.
    #[command(subcommand)]
    Plan(PlanCommand),
    /// Table of the growth function m_H(N) against 2^N, with the break point.
    Growth(GrowthArgs),
    /// List the model families, their growth functions and sources.
    Families(FormatArgs),
    /// Re-hash a certificate's inputs, recompute the audit and report any drift.
    Verify(VerifyArgs),
}

#[derive(Debug, Args)]
pub struct AuditArgs {
    /// Log files or folders.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
    #[command(flatten)]
    pub options: AuditFlags,
}

#[derive(Debug, Args)]
pub struct AuditFlags {
    /// Confidence of every bound (δ = 1 − confidence), on the logs' scale: a fraction
    /// (0.95), or a percentage (95) with --percent [default: 0.95].
    #[arg(long, value_name = "C")]
    pub confidence: Option<f64>,
    /// Which held-out bound decides the verdict.
    #[arg(long, value_enum, default_value_t = BoundArg::Binomial)]
    pub holdout_bound: BoundArg,
    /// Claimed accuracy for rows that carry no claim, on the logs' scale: a fraction
    /// (0.97), or a percentage (97) with --percent.
    #[arg(long, value_name = "X")]
    pub claim_accuracy: Option<f64>,
    /// Divide δ by the number of claims so all certificates hold together (Bonferroni).
    #[arg(long)]
    pub familywise: bool,
    /// Declare that every run was evaluated on one shared held-out split.
    #[arg(long)]
    pub same_holdout: bool,
    /// Target VC allowance for train_needed.
    #[arg(long, default_value_t = 0.05, value_name = "T")]
    pub tolerance: f64,
    /// Widest acceptable two-sided binomial interval before holdout_small.
    #[arg(long, default_value_t = 0.10, value_name = "W")]
    pub max_width: f64,
    /// Rates, accuracies and claims are percentages (0–100), and so are
    /// --claim-accuracy and --confidence. A log whose rates and claims all lie in
    /// [0, 1] is then an error (it holds fractions).
    #[arg(long)]
    pub percent: bool,
    /// Skip bad rows (and list them) instead of failing.
    #[arg(long)]
    pub lenient: bool,
    /// Rename a column: canonical=theirs (repeatable).
    #[arg(long = "map", value_name = "CANONICAL=THEIRS")]
    pub map: Vec<String>,
    /// JSON object of canonical → their column names.
    #[arg(long, value_name = "FILE")]
    pub map_file: Option<PathBuf>,
    /// Output format [default: from the extension of --output (.json, .ndjson,
    /// .jsonl, .csv, .parquet, .md, .xml for junit), else table].
    #[arg(long, value_enum)]
    pub format: Option<ReportFormatArg>,
    /// Write the report to FILE (atomically) instead of standard output.
    #[arg(long, short = 'o', value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// Also write a report to FILE, in the format its extension names (.json,
    /// .ndjson, .jsonl, .csv, .parquet, .md, .xml for junit, .html for the page);
    /// repeatable: one audit writes every report, so they cannot disagree.
    #[arg(long = "report", value_name = "FILE")]
    pub reports: Vec<PathBuf>,
    /// Also write a verifiable certificate (JSON) to FILE.
    #[arg(long, value_name = "FILE")]
    pub certificate: Option<PathBuf>,
    /// Also write a self-contained HTML page with charts to FILE.
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
    /// Which verdicts fail the gate (exit code 1) [default: unproven]. Runs whose
    /// claim looks like a slip (findings claim_below_half, claim_looks_like_error_rate,
    /// claim_looks_like_accuracy, holdout_n_equals_train_n) fail it too.
    #[arg(long, value_enum)]
    pub gate: Option<GateArg>,
    /// A claims file (repeatable; any log format): statements from a release note or
    /// model card, one per row, audited against the logs (README: claims).
    #[arg(long = "claims", value_name = "FILE")]
    pub claims: Vec<PathBuf>,
    /// JSON lines, CSV and Parquet: add each run's explanation (one sentence on its
    /// verdict); without it they carry codes and numbers only. The JSON document,
    /// table, Markdown, HTML and JUnit always have the sentences.
    #[arg(long)]
    pub explain: bool,
    /// Also write the claims flat to FILE (.ndjson, .csv or .parquet).
    #[arg(long, value_name = "FILE")]
    pub claims_output: Option<PathBuf>,
    /// The field separator of delimited logs (one character, or \t for a tab)
    /// [default: `,` for .csv, a tab for .tsv].
    #[arg(long, value_name = "C")]
    pub separator: Option<String>,
    /// Delimited logs write decimal numbers with a comma (0,93), as spreadsheet
    /// exports in many locales do (usually with --separator ';').
    #[arg(long)]
    pub decimal_comma: bool,
    /// Extra columns carried into every output (comma-separated names), such as
    /// git_commit,dataset_version.
    #[arg(long, value_name = "COLUMNS", value_delimiter = ',')]
    pub keep: Vec<String>,
    /// A finding that does not fail the gate (repeatable, or comma-separated).
    #[arg(long = "gate-allow", value_name = "CODE", value_delimiter = ',')]
    pub gate_allow: Vec<String>,
    /// Table and Markdown: show only runs with these verdicts (comma-separated:
    /// certified, unproven, refuted, no_claim). The data formats keep every run.
    #[arg(long, value_name = "VERDICTS", value_delimiter = ',')]
    pub only: Vec<VerdictArg>,
    /// Table and Markdown: show the N worst runs (default: all up to 1,000; a larger
    /// audit shows the 1,000 worst and says how many it left out).
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
}

#[derive(Debug, Subcommand)]
pub enum PlanCommand {
    /// Held-out examples needed to certify a claim at an observed error rate.
    Holdout(PlanHoldoutArgs),
    /// Training examples needed for the VC allowance to reach a tolerance.
    Train(PlanTrainArgs),
    /// Models a held-out split can be compared on before a best run's claim stops
    /// being certified.
    Reuse(PlanReuseArgs),
}

#[derive(Debug, Args)]
pub struct PlanReuseArgs {
    /// Held-out examples in the split.
    #[arg(long, value_name = "N")]
    pub holdout_n: u64,
    /// The best run's error rate on the split (k = ceil(E·N) errors).
    #[arg(long, value_name = "E")]
    pub error_rate: f64,
    /// The accuracy to certify.
    #[arg(long, value_name = "A")]
    pub claim_accuracy: f64,
    #[arg(long, default_value_t = 0.95, value_name = "C")]
    pub confidence: f64,
    #[command(flatten)]
    pub format: FormatArgs,
}

#[derive(Debug, Args)]
pub struct PlanHoldoutArgs {
    /// Expected (observed) held-out error rate.
    #[arg(long, value_name = "E")]
    pub error_rate: f64,
    /// The accuracy to certify.
    #[arg(long, value_name = "A")]
    pub claim_accuracy: f64,
    /// Models compared on the same held-out split.
    #[arg(long, default_value_t = 1, value_name = "K")]
    pub candidates: u64,
    #[arg(long, default_value_t = 0.95, value_name = "C")]
    pub confidence: f64,
    #[command(flatten)]
    pub format: FormatArgs,
}

#[derive(Debug, Args)]
pub struct PlanTrainArgs {
    #[command(flatten)]
    pub family: FamilyArgs,
    /// Target VC allowance.
    #[arg(long, default_value_t = 0.05, value_name = "T")]
    pub tolerance: f64,
    #[arg(long, default_value_t = 0.95, value_name = "C")]
    pub confidence: f64,
    #[command(flatten)]
    pub format: FormatArgs,
}

#[derive(Debug, Args)]
pub struct GrowthArgs {
    #[command(flatten)]
    pub family: FamilyArgs,
    /// Largest N in the table (at most 10000).
    #[arg(long, default_value_t = 10, value_name = "N")]
    pub upto: u64,
    /// Also draw m_H(N) against 2^N as an SVG chart.
    #[arg(long, value_name = "FILE")]
    pub svg: Option<PathBuf>,
    #[command(flatten)]
    pub format: FormatArgs,
}

/// `--family` and one flag per family parameter, made from the table of families in
/// `gapcert::theory::growth` (`vc_dim` is `--vc-dim`), so a new family's parameter is
/// a flag without a change here.
#[derive(Debug, Clone)]
pub struct FamilyArgs {
    pub family: String,
    pub params: FamilyParams,
}

impl FromArgMatches for FamilyArgs {
    fn from_arg_matches(matches: &ArgMatches) -> Result<Self, clap::Error> {
        let family = matches
            .get_one::<String>("family")
            .cloned()
            .ok_or_else(|| clap::Error::new(clap::error::ErrorKind::MissingRequiredArgument))?;
        let mut params = FamilyParams::default();
        for name in FAMILY_PARAMETERS {
            if let Some(&value) = matches.get_one::<i64>(name) {
                params = params.with(name, value);
            }
        }
        Ok(FamilyArgs { family, params })
    }

    fn update_from_arg_matches(&mut self, matches: &ArgMatches) -> Result<(), clap::Error> {
        *self = FamilyArgs::from_arg_matches(matches)?;
        Ok(())
    }
}

impl Args for FamilyArgs {
    fn augment_args(command: clap::Command) -> clap::Command {
        let mut command = command.arg(
            Arg::new("family")
                .long("family")
                .value_name("F")
                .required(true)
                .help("Family key (see `gapcert families`)."),
        );
        for name in FAMILY_PARAMETERS {
            // clap keeps flag names for the life of the program; these few are made once.
            let flag: &'static str = Box::leak(name.replace('_', "-").into_boxed_str());
            let value_name: &'static str = Box::leak(name.to_ascii_uppercase().into_boxed_str());
            command = command.arg(
                Arg::new(name)
                    .long(flag)
                    .value_name(value_name)
                    .value_parser(clap::value_parser!(i64))
                    .help("Family parameter (see `gapcert families`)."),
            );
        }
        command
    }

    fn augment_args_for_update(command: clap::Command) -> clap::Command {
        FamilyArgs::augment_args(command)
    }
}

#[derive(Debug, Args)]
pub struct FormatArgs {
    /// Output format.
    #[arg(long, value_enum, default_value_t = SimpleFormatArg::Table)]
    pub format: SimpleFormatArg,
}

#[derive(Debug, Args)]
pub struct VerifyArgs {
    /// A certificate written by `gapcert audit --certificate`.
    #[arg(value_name = "CERTIFICATE")]
    pub certificate: PathBuf,
    /// Read the inputs from DIR (the folder the audit ran in, or a copy of it) instead
    /// of the certificate's own folder; paths leading out of DIR are still refused.
    #[arg(long, value_name = "DIR")]
    pub root: Option<PathBuf>,
    #[command(flatten)]
    pub format: FormatArgs,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum BoundArg {
    Binomial,
    Hoeffding,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum VerdictArg {
    Certified,
    Unproven,
    Refuted,
    #[value(name = "no_claim")]
    NoClaim,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum GateArg {
    Unproven,
    Refuted,
    Never,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ReportFormatArg {
    Table,
    Json,
    Ndjson,
    Csv,
    Parquet,
    Markdown,
    /// JUnit XML: one test case per claim, for CI systems.
    Junit,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum SimpleFormatArg {
    Table,
    Json,
}
