//! `gapcert plan holdout`, `plan train`, `growth` and `families`: the library's
//! calculators, printed through `gapcert::report`.

use gapcert::calculators;
use gapcert::Error;

use super::outcome::Outcome;
use super::settings::simple_format;
use super::terminal::{print_view, remove_stale_temporaries, write_file, Terminal};
use crate::cli::{FormatArgs, GrowthArgs, PlanHoldoutArgs, PlanReuseArgs, PlanTrainArgs};

/// `gapcert plan holdout`: held-out examples needed to certify a claim at an observed
/// error rate, by the exact binomial bound and by Hoeffding's.
pub fn plan_holdout(args: &PlanHoldoutArgs, terminal: Terminal) -> Result<Outcome, Error> {
    let plan = calculators::plan_holdout(
        args.error_rate,
        args.claim_accuracy,
        args.candidates,
        args.confidence,
    )?;
    print_view(&plan, simple_format(args.format.format), terminal)?;
    Ok(Outcome::Pass)
}

/// `gapcert plan reuse`: models a split can be compared on before a claim stops being
/// certified, by the exact binomial bound and by Hoeffding's closed form.
pub fn plan_reuse(args: &PlanReuseArgs, terminal: Terminal) -> Result<Outcome, Error> {
    let plan = calculators::plan_reuse(
        args.holdout_n,
        args.error_rate,
        args.claim_accuracy,
        args.confidence,
    )?;
    print_view(&plan, simple_format(args.format.format), terminal)?;
    Ok(Outcome::Pass)
}

/// `gapcert plan train`: training examples for the VC allowance to reach a tolerance.
pub fn plan_train(args: &PlanTrainArgs, terminal: Terminal) -> Result<Outcome, Error> {
    let family = calculators::family(&args.family.family, &args.family.params)?;
    let plan = calculators::plan_train(&family, args.tolerance, args.confidence)?;
    print_view(&plan, simple_format(args.format.format), terminal)?;
    Ok(Outcome::Pass)
}

/// `gapcert growth`: m_H(N) against 2^N with the break point, optionally drawn as SVG.
pub fn growth(args: &GrowthArgs, terminal: Terminal) -> Result<Outcome, Error> {
    let family = calculators::family(&args.family.family, &args.family.params)?;
    let table = calculators::growth_table(&family, args.upto)?;
    if let Some(path) = &args.svg {
        remove_stale_temporaries(&[path.as_path()], terminal);
        write_file(path, |out| {
            gapcert::report::charts::write_growth_svg(&family, &table.rows, out)
        })?;
    }
    print_view(&table, simple_format(args.format.format), terminal)?;
    Ok(Outcome::Pass)
}

/// `gapcert families`: the model families, their growth functions and sources.
pub fn families(args: &FormatArgs, terminal: Terminal) -> Result<Outcome, Error> {
    print_view(
        &calculators::families(),
        simple_format(args.format),
        terminal,
    )?;
    Ok(Outcome::Pass)
}
