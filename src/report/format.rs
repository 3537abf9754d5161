//! The output formats.

/// Every output format, for every command. Audits write all of them; the calculators
/// and `verify` write [`OutputFormat::Table`] and [`OutputFormat::Json`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutputFormat {
    Table,
    Json,
    Ndjson,
    Csv,
    Parquet,
    Markdown,
    /// JUnit XML for CI systems.
    Junit,
}

impl OutputFormat {
    /// Whether the format is binary (refused on a terminal without `--output`).
    pub fn is_binary(self) -> bool {
        matches!(self, OutputFormat::Parquet)
    }

    /// Whether an audit in this format can be written batch by batch as the runs are
    /// audited (one record per run, nothing that needs every run first).
    pub fn streams(self) -> bool {
        matches!(self, OutputFormat::Ndjson | OutputFormat::Csv)
    }

    /// Whether the format shows a selection of the runs (worst first, `--only`,
    /// `--top`) rather than every run: the table and Markdown. (The HTML page does
    /// too, but it also draws every run.)
    pub fn shows_a_selection(self) -> bool {
        matches!(self, OutputFormat::Table | OutputFormat::Markdown)
    }

    /// The format's name as `--format` spells it.
    pub fn name(self) -> &'static str {
        match self {
            OutputFormat::Table => "table",
            OutputFormat::Json => "json",
            OutputFormat::Ndjson => "ndjson",
            OutputFormat::Csv => "csv",
            OutputFormat::Parquet => "parquet",
            OutputFormat::Markdown => "markdown",
            OutputFormat::Junit => "junit",
        }
    }

    /// What the format writes, in words.
    pub fn description(self) -> &'static str {
        match self {
            OutputFormat::Table => "a terminal table",
            OutputFormat::Json => "one JSON document",
            OutputFormat::Ndjson => "JSON lines",
            OutputFormat::Csv => "CSV",
            OutputFormat::Parquet => "Parquet",
            OutputFormat::Markdown => "Markdown",
            OutputFormat::Junit => "JUnit XML",
        }
    }
}
