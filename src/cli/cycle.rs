//! `fadecast cycle SCENARIO`: simulate one periodic duty cycle of the fresh cell, write the
//! trace and its plot, print the summary.

use super::{input_warning_lines, print_caution, print_cautions, scenario_header, step_labels, CliError};
use crate::cycle::{simulate_periodic_cycle, Health, SolverSettings};
use crate::input::InputError;
use crate::input::{self, Override};
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

pub const CSV_NAME: &str = "cycle.csv";
pub const SVG_NAME: &str = "cycle.svg";

pub struct CycleConfig {
    pub scenario: PathBuf,
    pub out_dir: PathBuf,
    pub overrides: Vec<Override>,
}

pub fn run(config: &CycleConfig, out: &mut impl Write) -> Result<(), CliError> {
    let loaded = input::load_scenario(&config.scenario, &config.overrides)?;
    let scenario = &loaded.scenario;
    if scenario.pack.is_some() {
        return Err(InputError::new(
            &config.scenario,
            "pack: `cycle` simulates one cell; forecast a pack with `forecast`, `bands`, `compare` or `table`",
        )
        .into());
    }
    let record = simulate_periodic_cycle(scenario, &Health::fresh(&scenario.cell), &SolverSettings::default())?;
    // Render everything before touching the disk: a failure here leaves no file behind.
    let csv = report::cycle_csv(&record, &step_labels(&scenario.duty))?;
    let svg = report::cycle_svg(&record, &format!("{}: one cycle at beginning of life", scenario.name))?;
    let written = report::write_all_atomic(&config.out_dir, &[(CSV_NAME, csv.as_slice()), (SVG_NAME, svg.as_bytes())])?;

    let mut text = scenario_header(&config.scenario, &loaded);
    text.push_str("\nOne periodic cycle at beginning of life\n");
    text.push_str(&report::cycle_summary(&record));
    let mut cautions = input_warning_lines(&loaded);
    cautions.extend(report::cycle_cautions(&record, &scenario.cell));
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&cautions)?;
    print_caution()?;
    Ok(())
}
