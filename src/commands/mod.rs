//! One module per command. Each checks its flags into settings (`settings`), calls
//! the library, and writes the result through `gapcert::report`; `main` maps the
//! outcome to an exit code.

mod audit;
mod calculators;
mod outcome;
pub mod settings;
pub mod terminal;
mod verify;

use gapcert::Error;

use crate::cli::{Cli, Command, PlanCommand};
pub use outcome::Outcome;
use terminal::Terminal;

/// Runs the parsed command line.
pub fn run(cli: Cli) -> Result<Outcome, Error> {
    let terminal = Terminal {
        quiet: cli.quiet,
        verbose: cli.verbose,
    };
    match cli.command {
        Command::Audit(args) => {
            let sources = audit::SourceSpec::Paths(args.paths);
            audit::run(&sources, &args.options, terminal)
        }
        Command::Demo(options) => audit::run(&audit::SourceSpec::Demo, &options, terminal),
        Command::Plan(PlanCommand::Holdout(args)) => calculators::plan_holdout(&args, terminal),
        Command::Plan(PlanCommand::Train(args)) => calculators::plan_train(&args, terminal),
        Command::Plan(PlanCommand::Reuse(args)) => calculators::plan_reuse(&args, terminal),
        Command::Growth(args) => calculators::growth(&args, terminal),
        Command::Families(args) => calculators::families(&args, terminal),
        Command::Verify(args) => verify::run(&args, terminal),
    }
}
