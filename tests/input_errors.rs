//! Acceptance tests for the input layer: valid files convert to SI, bad files give one-line
//! errors naming the file, line, key and rule, and no input makes a loader panic.
//!
//! The numbers in the files below are arbitrary round values chosen for these tests; checks
//! compare against the unit definitions, never against published data.

mod common;

use std::path::{Path, PathBuf};

use fadecast::aging::film::FilmTransport;
use fadecast::cycle::{Drive, DutyCycle, SeriesSignal, StepEnd};
use fadecast::ensemble::{CorrelationGroup, Distribution, Sampling, UncertainParameter, UncertaintySpec};
use fadecast::forecast::{Ambient, EndOfLife, Horizon};
use fadecast::input::{
    detect_kind, load_cell, load_duty, load_scenario, load_series, parse_horizon, parse_override, InputError,
    InputKind, Override,
};
use fadecast::material::constants::{FARADAY, SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use fadecast::material::{BuiltinOcp, OpenCircuit};

const CELL: &str = r#"name = "test cell"
nominal_capacity_ah = 2.0
voltage_min_v = 3.0
voltage_max_v = 4.0
reference_temperature_c = 20

[resistance]
ohmic_mohm = 10.0
ohmic_activation_kj_mol = 20.0
film_mohm = 1.0

[electrolyte]
concentration_mol_m3 = 1000.0

[thermal]
mass_kg = 0.1
specific_heat_j_kg_k = 1000.0
convective_conductance_w_k = 0.5

[limits]
max_charge_current_a = 4.0
max_discharge_current_a = 6.0
min_temperature_c = -10.0
max_temperature_c = 50.0

[negative]
thickness_um = 50.0
area_m2 = 0.1
active_fraction = 0.5
particle_radius_um = 5.0
max_concentration_mol_m3 = 30000.0
stoich_at_soc0 = 0.1
stoich_at_soc100 = 0.8
diffusivity_m2_s = 1.0e-14
diffusivity_activation_kj_mol = 30.0
rate_constant_m_s = 1.0e-10
rate_constant_activation_kj_mol = 40.0
ocp = "graphite-staged"
entropic_coefficient_mv_k = -0.2
youngs_modulus_gpa = 10.0
poisson_ratio = 0.25
partial_molar_volume_cm3_mol = 3.0

[positive]
thickness_um = 40.0
area_m2 = 0.1
active_fraction = 0.6
particle_radius_um = 4.0
max_concentration_mol_m3 = 43750.0
stoich_at_soc0 = 0.9
stoich_at_soc100 = 0.4
diffusivity_m2_s = 2.0e-14
diffusivity_activation_kj_mol = 30.0
rate_constant_m_s = 2.0e-10
rate_constant_activation_kj_mol = 40.0
ocp_table = [
  [0.3, 4.2],
  [0.6, 3.9],
  [0.95, 3.6],
]
youngs_modulus_gpa = 100.0
poisson_ratio = 0.3
partial_molar_volume_cm3_mol = 2.0
"#;

const PROFILE: &str = r#"name = "test profile"
start_soc_pct = 90

[[block]]
[[block.step]]
label = "drive"
discharge_c = 1.0
end_voltage_v = 3.0
[[block.step]]
rest = true
end_time_min = 10

[[block]]
repeat = 2
[[block.step]]
charge_c = 0.5
end_voltage_v = 4.0
[[block.step]]
hold_v = 4.0
end_current_c = 0.05
end_time_h = 2
"#;

const SCENARIO: &str = r#"name = "test scenario"
cell = "../cells/cell.toml"
profile = "../profiles/profile.toml"
ambient_c = 25.0
"#;

/// Aging-mechanism tables to append to [`CELL`]: every mechanism, one switched off.
const MECHANISMS: &str = r#"
[negative.film]
reaction_rate_m_s = 1.0e-15
reaction_activation_kj_mol = 50.0
solvent_diffusivity_m2_s = 2.0e-21
solvent_diffusivity_activation_kj_mol = 30.0
solvent_concentration_mol_m3 = 5000.0
molar_volume_cm3_mol = 50.0
conductivity_s_m = 1.0e-5
initial_thickness_nm = 2.0
reference_temperature_c = 30

[negative.cracking]
paris_coefficient = 1.0e-18
paris_exponent = 2.0
threshold_kpa_sqrt_m = 2.0
initial_length_nm = 10.0
density_per_um2 = 3.0
width_nm = 100.0
activation_kj_mol = 25.0

[positive.cracking]
enabled = false

[negative.plating]
exchange_current_a_m2 = 0.01
activation_kj_mol = 40.0
irreversible_fraction = 0.5

[negative.active_loss]
rate_per_cycle = 1.0e-5
critical_stress_mpa = 20.0
exponent = 3.0
activation_kj_mol = 10.0

[positive.active_loss]
rate_per_cycle = 2.0e-5
critical_stress_mpa = 5.0
exponent = 1.0
activation_kj_mol = 0.0
reference_temperature_c = 40

[calibration]
cycles = 1000
days = 365
"#;

/// Forecast sections to append to [`SCENARIO`].
const PLAN: &str = r#"
[usage]
cycles_per_day = 2.5
rest_soc_pct = 40
monthly_ambient_c = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12.5]
start_month = 4

[horizon]
years = 2.5

[end_of_life]
capacity_pct = 70
resistance_pct = 150
"#;

/// An uncertainty section to append to [`SCENARIO`], for a cell with [`MECHANISMS`]: one
/// parameter of each distribution, in each of the three files, and one correlation group.
const UNCERTAINTY: &str = r#"
[uncertainty]
sampling = "latin-hypercube"

[[uncertainty.parameter]]
path = "cell.negative.film.solvent_diffusivity_m2_s"
distribution = "log-normal"
median = 2.0e-21
sigma_ln = 0.5

[[uncertainty.parameter]]
path = "cell.negative.particle_radius_um"
distribution = "truncated-normal"
mean = 5.0
sd = 0.5
low = 4.0
high = 6.0

[[uncertainty.parameter]]
path = "ambient_c"
distribution = "uniform"
low = 20.0
high = 30.0

[[uncertainty.parameter]]
path = "cell.resistance.ohmic_mohm"
distribution = "normal"
mean = 10.0
sd = 1.0

[[uncertainty.parameter]]
path = "cell.negative.film.reaction_rate_m_s"
distribution = "log-normal"
median = 1.0e-15
sigma_ln = 0.25

[[uncertainty.parameter]]
path = "profile.block.1.step.0.charge_c"
distribution = "normal"
mean = 0.5
sd = 0.05

[[uncertainty.correlation]]
parameters = ["cell.negative.film.solvent_diffusivity_m2_s", "cell.negative.film.reaction_rate_m_s"]
matrix = [[1.0, 0.5], [0.5, 1.0]]
"#;

/// The nominal capacity of [`CELL`], for loading profiles on their own.
const CELL_CAPACITY_COULOMB: f64 = 2.0 * SECONDS_PER_HOUR;

struct Files {
    dir: tempfile::TempDir,
}

impl Files {
    fn new() -> Self {
        Self { dir: tempfile::tempdir().expect("temporary directory") }
    }

    fn write(&self, name: &str, text: &str) -> PathBuf {
        let path = self.dir.path().join(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("create directory");
        }
        std::fs::write(&path, text).expect("write test file");
        path
    }
}

/// `text` with its only occurrence of `from` replaced by `to`.
fn edited(text: &str, from: &str, to: &str) -> String {
    assert_eq!(text.matches(from).count(), 1, "`{from}` must occur exactly once");
    text.replacen(from, to, 1)
}

/// 1-based line of the only line containing `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    let lines: Vec<usize> = text.lines().enumerate().filter(|(_, l)| l.contains(needle)).map(|(i, _)| i + 1).collect();
    assert_eq!(lines.len(), 1, "`{needle}` must be on exactly one line");
    lines[0]
}

fn cell_error(files: &Files, text: &str) -> (PathBuf, InputError) {
    let path = files.write("cell.toml", text);
    let error = load_cell(&path, &[]).expect_err("the cell file should be rejected");
    (path, error)
}

fn profile_error(files: &Files, text: &str) -> InputError {
    let path = files.write("profile.toml", text);
    load_duty(&path, CELL_CAPACITY_COULOMB, &[]).expect_err("the profile should be rejected")
}

fn overrides(texts: &[&str]) -> Vec<Override> {
    texts.iter().map(|t| parse_override(t).expect("well-formed override")).collect()
}

fn assert_close(actual: f64, expected: f64) {
    assert!((actual - expected).abs() <= 1e-12 * expected.abs().max(1e-300), "{actual} ≠ {expected}");
}

/// Checks file, line, key and a fragment of the rule, and that the message is one line.
fn assert_error(error: &InputError, file: &Path, line: Option<usize>, key: &str, rule: &str) {
    assert_eq!(error.file, file, "{error}");
    assert_eq!(error.line, line, "{error}");
    assert_eq!(error.key.as_deref(), Some(key), "{error}");
    assert!(error.rule.contains(rule), "`{error}` should contain `{rule}`");
    let message = error.to_string();
    assert!(!message.contains('\n'));
    assert!(message.starts_with(&file.display().to_string()), "{message}");
}

#[test]
fn valid_cell_converts_to_si_units() {
    let files = Files::new();
    let cell = load_cell(&files.write("cell.toml", CELL), &[]).expect("valid cell").cell;

    assert_eq!(cell.name, "test cell");
    assert_close(cell.nominal_capacity_coulomb, 2.0 * 3600.0);
    assert_close(cell.voltage_min_v, 3.0);
    assert_close(cell.voltage_max_v, 4.0);
    assert_close(cell.reference_temperature_k, 20.0 + ZERO_CELSIUS_K);
    assert_close(cell.ohmic_resistance_ohm, 10.0e-3);
    assert_close(cell.ohmic_activation_j_mol, 20.0e3);
    assert_close(cell.film_resistance_ohm, 1.0e-3);
    assert_close(cell.electrolyte_concentration_mol_m3, 1000.0);
    assert_close(cell.mass_kg, 0.1);
    assert_close(cell.convective_conductance_w_k, 0.5);
    assert_close(cell.max_charge_current_a, 4.0);
    assert_close(cell.max_discharge_current_a, 6.0);
    assert_close(cell.temperature_min_k, -10.0 + ZERO_CELSIUS_K);
    assert_close(cell.temperature_max_k, 50.0 + ZERO_CELSIUS_K);
    assert_eq!(cell.shells, 16, "documented default");

    let negative = &cell.negative;
    assert_close(negative.thickness_m, 50.0e-6);
    assert_close(negative.particle_radius_m, 5.0e-6);
    assert_close(negative.diffusivity_activation_j_mol, 30.0e3);
    assert_close(negative.rate_constant_activation_j_mol, 40.0e3);
    assert_close(negative.entropic_coefficient_v_k, -0.2e-3);
    assert_close(negative.youngs_modulus_pa, 10.0e9);
    assert_close(negative.partial_molar_volume_m3_mol, 3.0e-6);
    assert_eq!(negative.ocp, OpenCircuit::Builtin(BuiltinOcp::GraphiteStaged));
    assert_close(negative.capacity_coulomb(), 50.0e-6 * 0.1 * 0.5 * 30000.0 * FARADAY);

    let positive = &cell.positive;
    assert_close(positive.stoich_at_soc0, 0.9);
    assert_close(positive.stoich_at_soc100, 0.4);
    assert_close(positive.entropic_coefficient_v_k, 0.0);
    assert_eq!(positive.ocp, OpenCircuit::Table { stoich: vec![0.3, 0.6, 0.95], potential_v: vec![4.2, 3.9, 3.6] });
}

#[test]
fn missing_file_names_the_path() {
    let files = Files::new();
    let path = files.dir.path().join("no-such-cell.toml");
    let error = load_cell(&path, &[]).expect_err("missing file");
    assert_eq!(error.file, path);
    assert_eq!(error.to_string(), format!("{}: file does not exist", path.display()));
}

#[test]
fn malformed_toml_has_its_line() {
    let files = Files::new();
    let text = edited(CELL, "mass_kg = 0.1", "mass_kg = = 0.1");
    let (path, error) = cell_error(&files, &text);
    assert_eq!(error.file, path);
    assert_eq!(error.line, Some(line_of(&text, "mass_kg")));
    assert!(error.rule.starts_with("invalid TOML"), "{error}");
}

#[test]
fn unknown_key_suggests_the_nearest_valid_key() {
    let files = Files::new();
    let text = edited(CELL, "particle_radius_um = 5.0", "partical_radius_um = 5.0");
    let (path, error) = cell_error(&files, &text);
    let line = line_of(&text, "partical_radius_um");
    assert_error(&error, &path, Some(line), "negative.partical_radius_um", "unknown key");
    assert_eq!(
        error.to_string(),
        format!(
            "{}:{line}: negative.partical_radius_um: unknown key; did you mean `particle_radius_um`?",
            path.display()
        )
    );
}

#[test]
fn wrong_type_has_key_and_line() {
    let files = Files::new();
    let text = edited(CELL, "thickness_um = 40.0", "thickness_um = \"forty\"");
    let (path, error) = cell_error(&files, &text);
    let line = line_of(&text, "\"forty\"");
    assert_error(&error, &path, Some(line), "positive.thickness_um", "expected a number");
}

#[test]
fn missing_key_names_its_table() {
    let files = Files::new();
    let text = edited(CELL, "mass_kg = 0.1\n", "");
    let (path, error) = cell_error(&files, &text);
    assert_error(&error, &path, Some(line_of(&text, "[thermal]")), "thermal.mass_kg", "required key is missing");
}

#[test]
fn impossible_cell_values_name_key_rule_and_line() {
    // (text to replace, replacement, key, rule fragment, text on the reported line)
    let cases = [
        (
            "particle_radius_um = 5.0",
            "particle_radius_um = -5.0",
            "negative.particle_radius_um",
            "must be positive",
            "-5.0",
        ),
        ("stoich_at_soc0 = 0.9", "stoich_at_soc0 = 1.2", "positive.stoich_at_soc0", "must lie in 0–1", "1.2"),
        ("voltage_min_v = 3.0", "voltage_min_v = 4.5", "voltage_min_v", "must be below voltage_max_v", "4.5"),
        ("stoich_at_soc100 = 0.8", "stoich_at_soc100 = 0.05", "negative.stoich_at_soc100", "must be above", "0.05"),
        ("poisson_ratio = 0.3", "poisson_ratio = 0.7", "positive.poisson_ratio", "must lie in 0–0.5", "0.7"),
        ("min_temperature_c = -10.0", "min_temperature_c = 70.0", "limits.min_temperature_c", "must be below", "70.0"),
        (
            "ocp = \"graphite-staged\"",
            "ocp = \"graphite-stage\"",
            "negative.ocp",
            "did you mean `graphite-staged`?",
            "-stage\"",
        ),
        ("  [0.6, 3.9],", "  [0.2, 3.9],", "positive.ocp_table", "must increase strictly", "ocp_table"),
        ("diffusivity_m2_s = 1.0e-14", "diffusivity_m2_s = nan", "negative.diffusivity_m2_s", "finite", "nan"),
    ];
    for (from, to, key, rule, on_line) in cases {
        let files = Files::new();
        let text = edited(CELL, from, to);
        let (path, error) = cell_error(&files, &text);
        assert_error(&error, &path, Some(line_of(&text, on_line)), key, rule);
    }
}

#[test]
fn both_ocp_forms_is_an_error() {
    let files = Files::new();
    let text = edited(CELL, "ocp_table = [", "ocp = \"cobalt-oxide\"\nocp_table = [");
    let (path, error) = cell_error(&files, &text);
    assert_error(&error, &path, Some(line_of(&text, "ocp_table")), "positive.ocp_table", "not both");
}

fn cell_with_mechanisms() -> String {
    format!("{CELL}{MECHANISMS}")
}

#[test]
fn mechanism_tables_convert_to_si_units() {
    let files = Files::new();
    let cell = load_cell(&files.write("cell.toml", &cell_with_mechanisms()), &[]).expect("valid cell");
    let aging = &cell.aging;

    let film = aging.film.expect("film table present");
    assert_close(film.reaction_rate_m_s, 1.0e-15);
    assert_close(film.reaction_activation_j_mol, 50.0e3);
    let FilmTransport::SolventDiffusion { activation_j_mol, .. } = film.transport else { panic!("the default law") };
    assert_close(activation_j_mol, 30.0e3);
    assert_close(film.molar_volume_m3_mol, 50.0e-6);
    assert_close(film.initial_thickness_m, 2.0e-9);
    assert_close(film.reference_temperature_k, 30.0 + ZERO_CELSIUS_K);
    assert_close(film.transfer_coefficient, 0.5);
    assert_close(film.reference_potential_v, 0.4);

    let cracking = aging.neg_cracking.expect("negative cracking table present");
    assert_close(cracking.paris_coefficient, 1.0e-18);
    assert_close(cracking.threshold_pa_sqrt_m, 2.0e3);
    assert_close(cracking.initial_length_m, 10.0e-9);
    assert_close(cracking.density_per_m2, 3.0e12);
    assert_close(cracking.width_m, 100.0e-9);
    assert_close(cracking.reference_temperature_k, 20.0 + ZERO_CELSIUS_K);

    let plating = aging.plating.expect("plating table present");
    assert_close(plating.exchange_current_a_m2, 0.01);
    assert_close(plating.activation_j_mol, 40.0e3);
    assert_close(plating.transfer_coefficient, 0.5);
    assert_close(plating.irreversible_fraction, 0.5);

    let negative_loss = aging.neg_active_loss.expect("negative active-loss table present");
    assert_close(negative_loss.critical_stress_pa, 20.0e6);
    assert_close(negative_loss.activation_j_mol, 10.0e3);
    let positive_loss = aging.pos_active_loss.expect("positive active-loss table present");
    assert_close(positive_loss.rate_per_cycle, 2.0e-5);
    assert_close(positive_loss.critical_stress_pa, 5.0e6);
    assert_close(positive_loss.reference_temperature_k, 40.0 + ZERO_CELSIUS_K);

    assert_eq!(aging.pos_cracking, None, "`enabled = false` switches the mechanism off");
    let calibration = cell.calibration.expect("calibration table present");
    assert_eq!((calibration.cycles, calibration.days), (Some(1000.0), Some(365.0)));
}

#[test]
fn absent_mechanism_tables_are_off() {
    let files = Files::new();
    let cell = load_cell(&files.write("cell.toml", CELL), &[]).expect("valid cell");
    assert_eq!(cell.aging, fadecast::aging::AgingParams::default());
    assert_eq!(cell.calibration, None);
}

#[test]
fn overrides_switch_and_change_mechanisms() {
    let files = Files::new();
    let path = files.write("cell.toml", &cell_with_mechanisms());
    let set = overrides(&[
        "cell.negative.film.enabled=false",
        "cell.negative.cracking.paris_coefficient=4e-18",
        "cell.positive.active_loss.enabled=false",
    ]);
    let cell = load_cell(&path, &set).expect("overrides are valid");
    assert_eq!(cell.aging.film, None);
    assert_eq!(cell.aging.pos_active_loss, None);
    assert_close(cell.aging.neg_cracking.map_or(f64::NAN, |c| c.paris_coefficient), 4e-18);

    // A table the file lacks can be switched off too: it is created, then ignored.
    let plain = files.write("plain.toml", CELL);
    let cell = load_cell(&plain, &overrides(&["cell.negative.plating.enabled=false"])).expect("valid cell");
    assert_eq!(cell.aging.plating, None);
}

#[test]
fn mechanism_override_errors_name_set() {
    let files = Files::new();
    let path = files.write("cell.toml", CELL);
    let cases = [
        (
            "cell.negative.cracking.paris_coefficient=-1",
            "--set: cell.negative.cracking.paris_coefficient: must be positive, found -1",
        ),
        (
            "cell.positive.cracking.enabled=true",
            "--set: cell.positive.cracking.paris_coefficient: required key is missing",
        ),
        ("cell.positive.film.enabled=false", "--set: cell.positive.film: unknown key; film growth"),
        ("cell.negative.film.enabled=no", "--set: cell.negative.film.enabled: expected `true` or `false`"),
    ];
    for (text, expected) in cases {
        let error = load_cell(&path, &overrides(&[text])).expect_err(text);
        assert!(error.to_string().starts_with(expected), "`{error}` should start with `{expected}`");
    }
}

#[test]
fn impossible_mechanism_values_name_key_rule_and_line() {
    // (text to replace, replacement, key, rule fragment, text on the reported line)
    let cases = [
        (
            "paris_coefficient = 1.0e-18",
            "paris_coefficient = -1.0e-18",
            "negative.cracking.paris_coefficient",
            "must be positive, found -0.000000000000000001",
            "-1.0e-18",
        ),
        (
            "irreversible_fraction = 0.5",
            "irreversible_fraction = 1.5",
            "negative.plating.irreversible_fraction",
            "must lie in 0–1, found 1.5",
            "1.5",
        ),
        (
            "initial_length_nm = 10.0",
            "initial_length_nm = 6000.0",
            "negative.cracking.initial_length_nm",
            "must be below the particle radius (5 µm), found 6000 nm",
            "6000.0",
        ),
        (
            "exchange_current_a_m2 = 0.01",
            "exchange_current_a_m2 = 0.01\ntransfer_coefficient = 1.0",
            "negative.plating.transfer_coefficient",
            "must lie strictly between 0 and 1, found 1",
            "transfer_coefficient",
        ),
        (
            "reaction_activation_kj_mol = 50.0",
            "reaction_activation_kj_mol = -5.0",
            "negative.film.reaction_activation_kj_mol",
            "must be zero or positive",
            "-5.0",
        ),
        (
            "critical_stress_mpa = 20.0",
            "critical_stress_mpa = inf",
            "negative.active_loss.critical_stress_mpa",
            "must be a finite number",
            "inf",
        ),
        (
            "[positive.cracking]\nenabled = false\n",
            "[positive.film] # misplaced\nconductivity_s_m = 1.0\n",
            "positive.film",
            "unknown key; film growth is modelled on the negative electrode only",
            "# misplaced",
        ),
        (
            "[positive.cracking]\nenabled = false\n",
            "[positive.plating] # misplaced\n",
            "positive.plating",
            "unknown key; lithium plating is modelled on the negative electrode only",
            "# misplaced",
        ),
        (
            "conductivity_s_m = 1.0e-5\n",
            "",
            "negative.film.conductivity_s_m",
            "required key is missing; give it, or switch the mechanism off with `enabled = false`",
            "[negative.film]",
        ),
        ("days = 365", "days = 0", "calibration.days", "must be positive, found 0", "days"),
        ("cycles = 1000\ndays = 365\n", "", "calibration", "give `cycles`, `days` or `efc`", "[calibration]"),
    ];
    for (from, to, key, rule, on_line) in cases {
        let files = Files::new();
        let text = edited(&cell_with_mechanisms(), from, to);
        let (path, error) = cell_error(&files, &text);
        assert_error(&error, &path, Some(line_of(&text, on_line)), key, rule);
    }
}

#[test]
fn unknown_mechanism_key_suggests_the_nearest_valid_key() {
    let files = Files::new();
    let text = edited(&cell_with_mechanisms(), "conductivity_s_m = 1.0e-5", "conductivity_sm = 1.0e-5");
    let (path, error) = cell_error(&files, &text);
    let line = line_of(&text, "conductivity_sm");
    assert_eq!(
        error.to_string(),
        format!(
            "{}:{line}: negative.film.conductivity_sm: unknown key; did you mean `conductivity_s_m`?",
            path.display()
        )
    );
}

#[test]
fn switched_off_mechanism_needs_no_values() {
    let files = Files::new();
    // The switched-off table keeps an out-of-range value and lacks required keys.
    let text =
        edited(&cell_with_mechanisms(), "irreversible_fraction = 0.5", "irreversible_fraction = 1.5\nenabled = false");
    let cell = load_cell(&files.write("cell.toml", &text), &[]).expect("switched-off tables are not checked");
    assert_eq!(cell.aging.plating, None);
}

#[test]
fn valid_profile_expands_repeats_and_converts_units() {
    let files = Files::new();
    let path = files.write("profile.toml", PROFILE);
    let (duty, start_soc) = load_duty(&path, CELL_CAPACITY_COULOMB, &[]).expect("valid profile");
    assert_close(start_soc, 0.9);
    let DutyCycle::Steps(profile) = duty else { panic!("a .toml file is a step profile") };
    assert_eq!(profile.name, "test profile");
    assert_eq!(profile.steps.len(), 2 + 2 * 2);

    let capacity_a = CELL_CAPACITY_COULOMB / 3600.0;
    let drive = &profile.steps[0];
    assert_eq!(drive.label, "drive");
    assert_eq!(drive.drive, Drive::Current(1.0 * capacity_a));
    assert_eq!(drive.ends, vec![StepEnd::Voltage(3.0)]);
    let rest = &profile.steps[1];
    assert_eq!(rest.label, "step 2");
    assert_eq!((rest.drive, rest.ends.clone()), (Drive::Rest, vec![StepEnd::Time(10.0 * 60.0)]));
    let charge = &profile.steps[2];
    assert_eq!(charge.drive, Drive::Current(-0.5 * capacity_a), "charging current is negative");
    let hold = &profile.steps[3];
    assert_eq!(hold.drive, Drive::Voltage(4.0));
    assert_eq!(hold.ends, vec![StepEnd::CurrentBelow(0.05 * capacity_a), StepEnd::Time(2.0 * 3600.0)]);
    assert_eq!(profile.steps[4], profile.steps[2]);
    assert_eq!(profile.steps[5], profile.steps[3]);
}

#[test]
fn impossible_steps_name_key_rule_and_line() {
    // (text to replace, replacement, key, rule fragment, text on the reported line)
    let cases = [
        (
            "[[block.step]]\nlabel = \"drive\"\ndischarge_c = 1.0\nend_voltage_v = 3.0\n",
            "[[block.step]] # no end\nlabel = \"drive\"\ndischarge_c = 1.0\n",
            "block.0.step.0",
            "no end key",
            "# no end",
        ),
        (
            "charge_c = 0.5\nend_voltage_v = 4.0\n",
            "charge_c = 0.5\ncharge_a = 1.0\nend_voltage_v = 4.0\n",
            "block.1.step.0.charge_a",
            "exactly one drive key, but this one also has `charge_c`",
            "charge_a",
        ),
        (
            "rest = true\nend_time_min = 10\n",
            "rest = true\nend_voltage_v = 3.5\n",
            "block.0.step.1.end_voltage_v",
            "a rest ends on time only",
            "3.5",
        ),
        (
            "hold_v = 4.0\nend_current_c = 0.05\nend_time_h = 2\n",
            "hold_v = 4.0\nend_soc_pct = 95\n",
            "block.1.step.1.hold_v",
            "constant-voltage step needs a taper end (end_current_c or end_current_a)",
            "hold_v",
        ),
        (
            "charge_c = 0.5\nend_voltage_v = 4.0\n",
            "charge_c = 0.5\nend_current_a = 0.1\n",
            "block.1.step.0.end_current_a",
            "applies only to constant-voltage steps",
            "end_current_a",
        ),
        ("repeat = 2", "repeat = 0", "block.1.repeat", "must lie in 1–100000", "repeat"),
        ("discharge_c = 1.0", "discharge_c = -1.0", "block.0.step.0.discharge_c", "must be positive", "-1.0"),
    ];
    for (from, to, key, rule, on_line) in cases {
        let files = Files::new();
        let text = edited(PROFILE, from, to);
        let error = profile_error(&files, &text);
        let path = files.dir.path().join("profile.toml");
        assert_error(&error, &path, Some(line_of(&text, on_line)), key, rule);
    }
}

#[test]
fn unknown_step_key_has_its_line() {
    let files = Files::new();
    let text = edited(PROFILE, "end_time_min = 10", "end_time_mins = 10");
    let error = profile_error(&files, &text);
    let path = files.dir.path().join("profile.toml");
    assert_error(
        &error,
        &path,
        Some(line_of(&text, "end_time_mins")),
        "block.0.step.1.end_time_mins",
        "did you mean `end_time_min`?",
    );
}

#[test]
fn valid_series_converts_ambient() {
    let files = Files::new();
    let path = files.write("duty.csv", "time_s,power_w,ambient_c\n0,5.0,10\n30,-5.0,12\n90,0,12\n");
    let series = load_series(&path).expect("valid series");
    assert_eq!(series.signal, SeriesSignal::PowerW);
    assert_eq!(series.time_s, vec![0.0, 30.0, 90.0]);
    assert_eq!(series.value, vec![5.0, -5.0, 0.0]);
    assert_eq!(series.ambient_k, Some(vec![10.0 + ZERO_CELSIUS_K, 12.0 + ZERO_CELSIUS_K, 12.0 + ZERO_CELSIUS_K]));
    let (duty, start_soc) = load_duty(&path, CELL_CAPACITY_COULOMB, &[]).expect("valid series");
    assert!(matches!(duty, DutyCycle::Series(_)));
    assert_eq!(start_soc, 1.0);
}

#[test]
fn bad_series_names_line_and_column() {
    let cases = [
        ("time_s,ambient_c\n0,20\n10,20\n", 1, "current_a", "required column is missing"),
        ("time_s,current_a\n0,1\n10,one\n20,1\n", 3, "current_a", "expected a number, found `one`"),
        ("time_s,current_a\n0,1\n10,1\n10,2\n", 4, "time_s", "must increase strictly"),
        ("time_s,current_a\n0,1\n10,NaN\n20,1\n", 3, "current_a", "must be a finite number"),
        ("time_s,curent_a\n0,1\n10,1\n", 1, "curent_a", "did you mean `current_a`?"),
    ];
    for (text, line, column, rule) in cases {
        let files = Files::new();
        let path = files.write("duty.csv", text);
        let error = load_series(&path).expect_err("bad series");
        assert_error(&error, &path, Some(line), column, rule);
    }
}

#[test]
fn series_needs_two_rows() {
    let files = Files::new();
    let path = files.write("duty.csv", "time_s,current_a\n0,1\n");
    let error = load_series(&path).expect_err("one row");
    assert!(error.rule.contains("at least two rows"), "{error}");
}

fn scenario_files(cell: &str, profile: &str, scenario: &str) -> (Files, PathBuf) {
    let files = Files::new();
    files.write("cells/cell.toml", cell);
    files.write("profiles/profile.toml", profile);
    let path = files.write("scenarios/scenario.toml", scenario);
    (files, path)
}

#[test]
fn scenario_resolves_relative_paths_and_loads_everything() {
    let (files, path) = scenario_files(CELL, PROFILE, SCENARIO);
    let loaded = load_scenario(&path, &[]).expect("valid scenario");
    assert_eq!(loaded.cell_path, files.dir.path().join("scenarios/../cells/cell.toml"));
    assert_eq!(loaded.profile_path, files.dir.path().join("scenarios/../profiles/profile.toml"));
    assert_eq!(loaded.scenario.name, "test scenario");
    assert_eq!(loaded.scenario.cell.name, "test cell");
    assert_close(loaded.scenario.ambient_k, 25.0 + ZERO_CELSIUS_K);
    assert_close(loaded.scenario.start_soc, 0.9);
    assert!(loaded.warnings.is_empty(), "{:?}", loaded.warnings);
}

#[test]
fn scenario_warns_about_mismatched_windows_and_ambient() {
    let cell = edited(CELL, "stoich_at_soc100 = 0.4", "stoich_at_soc100 = 0.2");
    let scenario = edited(SCENARIO, "ambient_c = 25.0", "ambient_c = 55.0\nstart_soc_pct = 50");
    let (_files, path) = scenario_files(&cell, PROFILE, &scenario);
    let loaded = load_scenario(&path, &[]).expect("warnings are not errors");
    assert_close(loaded.scenario.start_soc, 0.5);
    assert_eq!(loaded.warnings.len(), 2, "{:?}", loaded.warnings);
    assert!(loaded.warnings.iter().any(|w| w.contains("electrode windows")));
    assert!(loaded.warnings.iter().any(|w| w.contains("ambient_c") && w.contains("temperature limits")));
}

#[test]
fn scenario_errors_name_the_file_at_fault() {
    let bad_cell = edited(CELL, "particle_radius_um = 4.0", "particle_radius_um = 0.0");
    let (files, path) = scenario_files(&bad_cell, PROFILE, SCENARIO);
    let error = load_scenario(&path, &[]).expect_err("bad cell");
    assert_eq!(error.file, files.dir.path().join("scenarios/../cells/cell.toml"));
    assert_eq!(error.key.as_deref(), Some("positive.particle_radius_um"));

    let missing = edited(SCENARIO, "../cells/cell.toml", "../cells/other.toml");
    let (_files, path) = scenario_files(CELL, PROFILE, &missing);
    let error = load_scenario(&path, &[]).expect_err("missing cell");
    assert_error(&error, &path, Some(2), "cell", "does not exist");

    let unknown = edited(SCENARIO, "ambient_c", "ambiant_c");
    let (_files, path) = scenario_files(CELL, PROFILE, &unknown);
    let error = load_scenario(&path, &[]).expect_err("unknown key");
    assert_error(&error, &path, Some(4), "ambiant_c", "did you mean `ambient_c`?");

    let out_of_window = edited(PROFILE, "hold_v = 4.0", "hold_v = 4.5");
    let (files, path) = scenario_files(CELL, &out_of_window, SCENARIO);
    let error = load_scenario(&path, &[]).expect_err("hold outside the window");
    let profile_path = files.dir.path().join("scenarios/../profiles/profile.toml");
    assert_error(
        &error,
        &profile_path,
        Some(line_of(&out_of_window, "hold_v")),
        "block.1.step.1.hold_v",
        "voltage window",
    );
}

fn scenario_with_plan() -> String {
    format!("{SCENARIO}{PLAN}")
}

#[test]
fn scenario_plan_converts_to_fractions_and_kelvin() {
    let (_files, path) = scenario_files(CELL, PROFILE, &scenario_with_plan());
    let plan = load_scenario(&path, &[]).expect("valid scenario").plan;
    assert_close(plan.usage.cycles_per_day, 2.5);
    assert_close(plan.usage.rest_soc, 0.4);
    assert_eq!(plan.usage.start_month, 4);
    let Ambient::Monthly(monthly_k) = plan.usage.ambient_k else {
        panic!("twelve monthly values give a monthly ambient")
    };
    assert_close(monthly_k[0], 1.0 + ZERO_CELSIUS_K);
    assert_close(monthly_k[11], 12.5 + ZERO_CELSIUS_K);
    assert_eq!(plan.horizon, Some(Horizon::Years(2.5)));
    assert_close(plan.end_of_life.capacity_fraction, 0.7);
    assert_close(plan.end_of_life.resistance_fraction, 1.5);
}

#[test]
fn scenario_plan_defaults() {
    let (_files, path) = scenario_files(CELL, PROFILE, SCENARIO);
    let plan = load_scenario(&path, &[]).expect("valid scenario").plan;
    assert_close(plan.usage.cycles_per_day, 1.0);
    assert_close(plan.usage.rest_soc, 0.5);
    assert_eq!(plan.usage.ambient_k, Ambient::Constant(25.0 + ZERO_CELSIUS_K));
    assert_eq!(plan.usage.start_month, 1);
    assert_eq!(plan.horizon, None);
    assert_eq!(plan.end_of_life, EndOfLife::default());
    assert_close(plan.end_of_life.capacity_fraction, 0.8);
    assert_close(plan.end_of_life.resistance_fraction, 2.0);

    let storage =
        edited(SCENARIO, "ambient_c = 25.0", "ambient_c = 25.0\n[usage]\ncycles_per_day = 0\n[horizon]\nyears = 10");
    let (_files, path) = scenario_files(CELL, PROFILE, &storage);
    let plan = load_scenario(&path, &[]).expect("storage only is valid").plan;
    assert_close(plan.usage.cycles_per_day, 0.0);
    assert_eq!(plan.horizon, Some(Horizon::Years(10.0)));
}

#[test]
fn impossible_plan_values_name_key_rule_and_line() {
    // (text to replace, replacement, key, rule fragment, text on the reported line)
    let cases = [
        (
            "[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12.5]",
            "[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]",
            "usage.monthly_ambient_c",
            "twelve monthly values expected, found 11",
            "monthly_ambient_c",
        ),
        (
            "[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12.5]",
            "[1, 2, -300, 4, 5, 6, 7, 8, 9, 10, 11, 12.5]",
            "usage.monthly_ambient_c",
            "March: must be above absolute zero",
            "monthly_ambient_c",
        ),
        (
            "cycles_per_day = 2.5",
            "cycles_per_day = -1",
            "usage.cycles_per_day",
            "must be zero or positive, found -1",
            "-1",
        ),
        (
            "rest_soc_pct = 40",
            "rest_soc_pct = 150",
            "usage.rest_soc_pct",
            "must lie in 0–100, found 150",
            "rest_soc_pct",
        ),
        ("start_month = 4", "start_month = 13", "usage.start_month", "must lie in 1–12", "13"),
        (
            "capacity_pct = 70",
            "capacity_pct = 120",
            "end_of_life.capacity_pct",
            "must lie strictly between 0 and 100, found 120",
            "120",
        ),
        (
            "resistance_pct = 150",
            "resistance_pct = 90",
            "end_of_life.resistance_pct",
            "must be above 100 (the fresh cell's resistance), found 90",
            "90",
        ),
        (
            "years = 2.5",
            "cycles = 500\nyears = 2.5",
            "horizon.years",
            "give either `cycles` or `years`, not both",
            "years",
        ),
        ("years = 2.5", "years = 0", "horizon.years", "must be positive, found 0", "years"),
        ("years = 2.5\n", "", "horizon", "needs `cycles` or `years`", "[horizon]"),
    ];
    for (from, to, key, rule, on_line) in cases {
        let text = edited(&scenario_with_plan(), from, to);
        let (_files, path) = scenario_files(CELL, PROFILE, &text);
        let error = load_scenario(&path, &[]).expect_err(to);
        assert_error(&error, &path, Some(line_of(&text, on_line)), key, rule);
    }

    let storage_in_cycles = edited(
        &edited(&scenario_with_plan(), "cycles_per_day = 2.5", "cycles_per_day = 0"),
        "years = 2.5",
        "cycles = 100",
    );
    let (_files, path) = scenario_files(CELL, PROFILE, &storage_in_cycles);
    let error = load_scenario(&path, &[]).expect_err("storage with a horizon in cycles");
    assert_error(
        &error,
        &path,
        Some(line_of(&storage_in_cycles, "cycles = 100")),
        "horizon.cycles",
        "storage only (`cycles_per_day = 0`) runs no cycles; give the horizon in `years`",
    );

    let text = edited(&scenario_with_plan(), "rest_soc_pct = 40", "rest_soc_pc = 40");
    let (_files, path) = scenario_files(CELL, PROFILE, &text);
    let error = load_scenario(&path, &[]).expect_err("unknown key");
    assert_error(
        &error,
        &path,
        Some(line_of(&text, "rest_soc_pc =")),
        "usage.rest_soc_pc",
        "did you mean `rest_soc_pct`?",
    );
}

#[test]
fn plan_overrides_and_their_errors() {
    let (_files, path) = scenario_files(CELL, PROFILE, &scenario_with_plan());
    let loaded = load_scenario(&path, &overrides(&["usage.cycles_per_day=0", "end_of_life.capacity_pct=60"]))
        .expect("overrides are valid");
    assert_close(loaded.plan.usage.cycles_per_day, 0.0);
    assert_close(loaded.plan.end_of_life.capacity_fraction, 0.6);

    let (_files, plain) = scenario_files(CELL, PROFILE, SCENARIO);
    let loaded = load_scenario(&plain, &overrides(&["horizon.cycles=400"])).expect("override adds a horizon");
    assert_eq!(loaded.plan.horizon, Some(Horizon::Cycles(400.0)));

    for (text, expected) in [
        ("usage.rest_soc_pct=101", "--set: usage.rest_soc_pct: must lie in 0–100, found 101"),
        ("horizon.cycles=100", "--set: horizon.cycles: give either `cycles` or `years`, not both"),
    ] {
        let error = load_scenario(&path, &overrides(&[text])).expect_err(text);
        assert!(error.to_string().starts_with(expected), "`{error}` should start with `{expected}`");
    }
}

#[test]
fn monthly_ambient_outside_the_cell_limits_is_a_warning() {
    let text = edited(&scenario_with_plan(), "7, 8, 9", "55, 8, 9");
    let (_files, path) = scenario_files(CELL, PROFILE, &text);
    let loaded = load_scenario(&path, &[]).expect("warnings are not errors");
    assert_eq!(loaded.warnings.len(), 1, "{:?}", loaded.warnings);
    let warning = &loaded.warnings[0];
    assert!(warning.contains("usage.monthly_ambient_c") && warning.contains("July (55.0 °C) is outside"), "{warning}");
}

#[test]
fn command_line_horizon_flags() {
    assert_eq!(parse_horizon(Some(100.0), None), Ok(Some(Horizon::Cycles(100.0))));
    assert_eq!(parse_horizon(None, None), Ok(None));
    let error = parse_horizon(Some(100.0), Some(2.0)).expect_err("both flags");
    assert_eq!(error.to_string(), "command line: --years: give either --cycles or --years, not both");
    let error = parse_horizon(Some(-5.0), None).expect_err("negative cycles");
    assert_eq!(error.to_string(), "command line: --cycles: must be positive, found -5");
}

#[test]
fn overrides_change_each_file() {
    let (_files, path) = scenario_files(CELL, PROFILE, SCENARIO);
    let set = overrides(&[
        "ambient_c=40",
        "cell.negative.particle_radius_um=2.5",
        "cell.numerics.shells=32",
        "profile.block.1.step.0.charge_c=1.5",
    ]);
    let loaded = load_scenario(&path, &set).expect("overrides are valid");
    assert_close(loaded.scenario.ambient_k, 40.0 + ZERO_CELSIUS_K);
    assert_close(loaded.scenario.cell.negative.particle_radius_m, 2.5e-6);
    assert_eq!(loaded.scenario.cell.shells, 32);
    let DutyCycle::Steps(profile) = &loaded.scenario.duty else { panic!("step profile") };
    assert_eq!(profile.steps[2].drive, Drive::Current(-1.5 * CELL_CAPACITY_COULOMB / 3600.0));
}

#[test]
fn override_errors_name_set() {
    let (_files, path) = scenario_files(CELL, PROFILE, SCENARIO);
    let cases = [
        ("cell.negative.particle_radius_um=-1", "--set: cell.negative.particle_radius_um: must be positive, found -1"),
        (
            "cell.negative.thickness_um=thick",
            "--set: cell.negative.thickness_um: expected a number, found string \"thick\"",
        ),
        (
            "cell.negative.partical_radius_um=1",
            "--set: cell.negative.partical_radius_um: unknown key; \
             did you mean `particle_radius_um`?",
        ),
        ("profile.block.5.step.0.charge_c=1", "--set: profile.block.5.step.0.charge_c: index 5 is out of range"),
        (
            "profile.block.0.step.1.end_voltage_v=3",
            "--set: profile.block.0.step.1.end_voltage_v: does not apply to a rest",
        ),
        ("ambient_c=-300", "--set: ambient_c: must be above absolute zero"),
        ("cell.name.first=x", "--set: cell.name.first: `name` is text, not a table"),
    ];
    for (text, expected) in cases {
        let error = load_scenario(&path, &overrides(&[text])).expect_err(text);
        assert!(error.is_from_command_line(), "{error}");
        assert!(error.to_string().starts_with(expected), "`{error}` should start with `{expected}`");
    }
    let malformed = parse_override("cell.negative.thickness_um").expect_err("no value");
    assert!(malformed.to_string().starts_with("--set: "), "{malformed}");
}

fn scenario_with_uncertainty() -> String {
    format!("{SCENARIO}{UNCERTAINTY}")
}

/// A scenario with [`UNCERTAINTY`] (as edited) over a cell with aging mechanisms.
fn uncertainty_files(scenario: &str) -> (Files, PathBuf) {
    scenario_files(&cell_with_mechanisms(), PROFILE, scenario)
}

fn numbers(draws: &[(&str, f64)]) -> Vec<Override> {
    draws.iter().map(|&(path, value)| Override::number(path, value).expect("well-formed path")).collect()
}

#[test]
fn uncertainty_section_converts_to_the_ensemble_spec() {
    let (_files, path) = uncertainty_files(&scenario_with_uncertainty());
    let loaded = load_scenario(&path, &[]).expect("valid uncertainty section");
    let parameter =
        |path: &str, distribution| UncertainParameter { path: path.to_string(), distribution, per_cell: false };
    let expected = UncertaintySpec {
        parameters: vec![
            parameter(
                "cell.negative.film.solvent_diffusivity_m2_s",
                Distribution::LogNormal { median: 2.0e-21, sigma_ln: 0.5 },
            ),
            parameter(
                "cell.negative.particle_radius_um",
                Distribution::TruncatedNormal { mean: 5.0, sd: 0.5, low: 4.0, high: 6.0 },
            ),
            parameter("ambient_c", Distribution::Uniform { low: 20.0, high: 30.0 }),
            parameter("cell.resistance.ohmic_mohm", Distribution::Normal { mean: 10.0, sd: 1.0 }),
            parameter(
                "cell.negative.film.reaction_rate_m_s",
                Distribution::LogNormal { median: 1.0e-15, sigma_ln: 0.25 },
            ),
            parameter("profile.block.1.step.0.charge_c", Distribution::Normal { mean: 0.5, sd: 0.05 }),
        ],
        groups: vec![CorrelationGroup { members: vec![0, 4], matrix: vec![1.0, 0.5, 0.5, 1.0] }],
        sampling: Sampling::LatinHypercube,
    };
    assert_eq!(loaded.uncertainty, expected);

    // Trying the paths leaves the loaded files as written.
    let (_files, plain) = uncertainty_files(SCENARIO);
    let without = load_scenario(&plain, &[]).expect("valid scenario");
    assert_eq!(without.uncertainty, UncertaintySpec::default(), "no section, empty spec");
    assert_eq!(loaded.scenario, without.scenario);

    let monte_carlo = edited(&scenario_with_uncertainty(), "sampling = \"latin-hypercube\"\n", "");
    let (_files, path) = uncertainty_files(&monte_carlo);
    assert_eq!(load_scenario(&path, &[]).expect("valid").uncertainty.sampling, Sampling::MonteCarlo, "default");

    // A truncated normal's mean may lie outside its bounds.
    let outside = edited(&scenario_with_uncertainty(), "mean = 5.0", "mean = 9.0");
    let (_files, path) = uncertainty_files(&outside);
    load_scenario(&path, &[]).expect("a mean outside the bounds is allowed");
}

#[test]
fn impossible_uncertainty_entries_name_key_rule_and_line() {
    // (text to replace, replacement, key, rule fragment, text on the reported line)
    let cases = [
        (
            "distribution = \"uniform\"",
            "distribution = \"uniforn\"",
            "uncertainty.parameter.2.distribution",
            "unknown distribution `uniforn`; did you mean `uniform`? distributions: normal, log-normal, uniform, \
             truncated-normal",
            "uniforn",
        ),
        (
            "path = \"cell.negative.particle_radius_um\"",
            "path = \"cell.negative.partical_radius_um\"",
            "uncertainty.parameter.1.path",
            "`cell.negative.partical_radius_um` is not a numeric input: unknown key; did you mean \
             `particle_radius_um`?",
            "partical",
        ),
        (
            "path = \"ambient_c\"",
            "path = \"name\"",
            "uncertainty.parameter.2.path",
            "`name` is not a numeric input: it takes text in quotes",
            "\"name\"",
        ),
        (
            "path = \"profile.block.1.step.0.charge_c\"",
            "path = \"profile.block.7.step.0.charge_c\"",
            "uncertainty.parameter.5.path",
            "is not a numeric input: index 7 is out of range",
            "block.7",
        ),
        (
            "path = \"ambient_c\"",
            "path = \"uncertainty.parameter.0.median\"",
            "uncertainty.parameter.2.path",
            "lies inside the uncertainty section",
            "parameter.0.median",
        ),
        (
            "path = \"cell.resistance.ohmic_mohm\"",
            "path = \" ambient_c\" # again",
            "uncertainty.parameter.3.path",
            "`ambient_c` is already sampled by uncertainty.parameter.2",
            "# again",
        ),
        ("sd = 1.0", "sd = -1.0", "uncertainty.parameter.3.sd", "must be positive, found -1", "-1.0"),
        (
            "sigma_ln = 0.25",
            "sigma_ln = -0.25",
            "uncertainty.parameter.4.sigma_ln",
            "must be positive, found -0.25",
            "-0.25",
        ),
        (
            "median = 2.0e-21",
            "median = 0.0",
            "uncertainty.parameter.0.median",
            "must be positive, found 0",
            "median = 0.0",
        ),
        (
            "low = 4.0\nhigh = 6.0",
            "low = 6.0\nhigh = 4.0",
            "uncertainty.parameter.1.low",
            "bounds in the wrong order: low 6 must be below high 4",
            "low = 6.0",
        ),
        (
            "low = 20.0",
            "mean = 25.0\nlow = 20.0",
            "uncertainty.parameter.2.mean",
            "does not apply to a uniform distribution, which takes `low` and `high`",
            "mean = 25.0",
        ),
        (
            "sigma_ln = 0.25",
            "sigma_lm = 0.25",
            "uncertainty.parameter.4.sigma_lm",
            "unknown key; did you mean `sigma_ln`?",
            "sigma_lm",
        ),
        (
            "mean = 10.0",
            "mean = -10.0",
            "uncertainty.parameter.3.mean",
            "the central value -10 (the mean) is not a valid `cell.resistance.ohmic_mohm`: must be zero or \
             positive, found -10",
            "-10.0",
        ),
        (
            "sampling = \"latin-hypercube\"",
            "sampling = \"latin_hypercube\"",
            "uncertainty.sampling",
            "unknown sampling `latin_hypercube`; did you mean `latin-hypercube`?",
            "latin_hypercube",
        ),
        (
            "\"cell.negative.film.reaction_rate_m_s\"]",
            "\"cell.negative.film.reaction_rate\"]",
            "uncertainty.correlation.0.parameters",
            "`cell.negative.film.reaction_rate` is not declared in an [[uncertainty.parameter]] entry; did you \
             mean `cell.negative.film.reaction_rate_m_s`?",
            "parameters =",
        ),
        (
            "matrix = [[1.0, 0.5], [0.5, 1.0]]",
            "matrix = [[1.0, 0.5], [0.5, 1.0]]\n[[uncertainty.correlation]]\n\
             parameters = [\"ambient_c\", \"cell.negative.film.reaction_rate_m_s\"] # second\n\
             matrix = [[1.0, 0.1], [0.1, 1.0]]",
            "uncertainty.correlation.1.parameters",
            "`cell.negative.film.reaction_rate_m_s` is already in uncertainty.correlation.0; a parameter belongs \
             to at most one correlation group",
            "# second",
        ),
        (
            "matrix = [[1.0, 0.5], [0.5, 1.0]]",
            "matrix = [[1.0, 0.5]]",
            "uncertainty.correlation.0.matrix",
            "must be 2 × 2, a row and a column per listed parameter; found 1 row of 2 entries",
            "matrix =",
        ),
        (
            "matrix = [[1.0, 0.5], [0.5, 1.0]]",
            "matrix = [[1.0, 0.5], [0.4, 1.0]]",
            "uncertainty.correlation.0.matrix",
            "not symmetric: row 1, column 2 is 0.5 but row 2, column 1 is 0.4",
            "matrix =",
        ),
        (
            "matrix = [[1.0, 0.5], [0.5, 1.0]]",
            "matrix = [[1.0, 0.5], [0.5, 0.9]]",
            "uncertainty.correlation.0.matrix",
            "row 2, column 2: the diagonal must be 1",
            "matrix =",
        ),
        (
            "matrix = [[1.0, 0.5], [0.5, 1.0]]",
            "matrix = [[1.0, 1.5], [1.5, 1.0]]",
            "uncertainty.correlation.0.matrix",
            "row 1, column 2: a correlation must lie in −1–1, found 1.5",
            "matrix =",
        ),
    ];
    for (from, to, key, rule, on_line) in cases {
        let text = edited(&scenario_with_uncertainty(), from, to);
        let (_files, path) = uncertainty_files(&text);
        let error = load_scenario(&path, &[]).expect_err(to);
        assert_error(&error, &path, Some(line_of(&text, on_line)), key, rule);
    }

    // A missing value key is reported at its entry's header.
    let text = edited(&scenario_with_uncertainty(), "sd = 1.0\n", "");
    let (_files, path) = uncertainty_files(&text);
    let error = load_scenario(&path, &[]).expect_err("normal without sd");
    let header = line_of(&text, "\"cell.resistance.ohmic_mohm\"") - 1;
    assert_error(
        &error,
        &path,
        Some(header),
        "uncertainty.parameter.3.sd",
        "required key is missing: a normal distribution takes `mean` and `sd`",
    );
}

#[test]
fn central_values_valid_only_one_at_a_time_are_an_error() {
    // Each central temperature limit is fine beside the file's other limit, but the pair
    // puts the minimum above the maximum.
    let section = "\n[uncertainty]\n\
                   [[uncertainty.parameter]]\npath = \"cell.limits.min_temperature_c\"\n\
                   distribution = \"uniform\"\nlow = 20.0\nhigh = 40.0\n\
                   [[uncertainty.parameter]]\npath = \"cell.limits.max_temperature_c\"\n\
                   distribution = \"uniform\"\nlow = 0.0\nhigh = 40.0\n";
    let text = format!("{SCENARIO}{section}");
    let (_files, path) = uncertainty_files(&text);
    let error = load_scenario(&path, &[]).expect_err("jointly invalid central values");
    assert_error(
        &error,
        &path,
        Some(line_of(&text, "[uncertainty]")),
        "uncertainty",
        "the central values are valid one at a time but not together: --set: cell.limits.min_temperature_c: \
         must be below max_temperature_c",
    );
}

#[test]
fn uncertainty_overrides_and_their_errors() {
    let (_files, path) = uncertainty_files(&scenario_with_uncertainty());
    let loaded =
        load_scenario(&path, &overrides(&["uncertainty.sampling=monte-carlo", "uncertainty.parameter.1.sd=0.25"]))
            .expect("overrides are valid");
    assert_eq!(loaded.uncertainty.sampling, Sampling::MonteCarlo);
    assert_eq!(
        loaded.uncertainty.parameters[1].distribution,
        Distribution::TruncatedNormal { mean: 5.0, sd: 0.25, low: 4.0, high: 6.0 }
    );

    // A sampled path takes `--set` like any other: the scenario as loaded has the value, and
    // the distribution is unchanged.
    let loaded =
        load_scenario(&path, &overrides(&["cell.negative.particle_radius_um=5.5", "ambient_c=21"])).expect("valid");
    assert_close(loaded.scenario.cell.negative.particle_radius_m, 5.5e-6);
    assert_close(loaded.scenario.ambient_k, 21.0 + ZERO_CELSIUS_K);
    assert_eq!(
        loaded.uncertainty.parameters[1].distribution,
        Distribution::TruncatedNormal { mean: 5.0, sd: 0.5, low: 4.0, high: 6.0 }
    );

    let (_files, plain) = uncertainty_files(SCENARIO);
    let added = load_scenario(
        &plain,
        &overrides(&["uncertainty.sampling=latin-hypercube", "uncertainty.parameter.0.path=ambient_c"]),
    );
    let error = added.expect_err("an entry created by --set still needs its keys");
    assert!(error.to_string().starts_with("--set: uncertainty.parameter"), "{error}");
    let loaded = load_scenario(&plain, &overrides(&["uncertainty.sampling=latin-hypercube"])).expect("valid");
    assert_eq!(loaded.uncertainty.sampling, Sampling::LatinHypercube);
    assert!(loaded.uncertainty.parameters.is_empty());

    for (text, expected) in [
        ("uncertainty.parameter.3.sd=-1", "--set: uncertainty.parameter.3.sd: must be positive, found -1"),
        (
            "uncertainty.parameter.1.path=cell.negative.partical_radius_um",
            "--set: uncertainty.parameter.1.path: `cell.negative.partical_radius_um` is not a numeric input: \
             unknown key; did you mean `particle_radius_um`?",
        ),
        ("uncertainty.sampling=stratified", "--set: uncertainty.sampling: unknown sampling `stratified`"),
        ("uncertainty.parameter.9.sd=1", "--set: uncertainty.parameter.9.sd: index 9 is out of range"),
    ] {
        let error = load_scenario(&path, &overrides(&[text])).expect_err(text);
        assert!(error.to_string().starts_with(expected), "`{error}` should start with `{expected}`");
    }
}

/// An ensemble sample is the scenario loaded with its drawn values as extra overrides.
#[test]
fn drawn_values_reach_the_files_they_address() {
    let (_files, path) = uncertainty_files(&scenario_with_uncertainty());
    let base = load_scenario(&path, &[]).expect("valid scenario");
    let draws = numbers(&[
        ("cell.negative.film.solvent_diffusivity_m2_s", 3.0e-21),
        ("cell.negative.particle_radius_um", 4.5),
        ("ambient_c", 27.5),
        ("cell.resistance.ohmic_mohm", 11.0),
        ("cell.negative.film.reaction_rate_m_s", 2.0e-15),
        ("profile.block.1.step.0.charge_c", 0.6),
    ]);
    let sample = load_scenario(&path, &draws).expect("drawn values are valid");
    let cell = &sample.scenario.cell;
    assert_close(cell.negative.particle_radius_m, 4.5e-6);
    assert_close(cell.ohmic_resistance_ohm, 11.0e-3);
    let film = sample.plan.aging.film.expect("film table present");
    let FilmTransport::SolventDiffusion { diffusivity_m2_s, .. } = film.transport else { panic!("the default law") };
    assert_close(diffusivity_m2_s, 3.0e-21);
    assert_close(film.reaction_rate_m_s, 2.0e-15);
    assert_close(sample.scenario.ambient_k, 27.5 + ZERO_CELSIUS_K);
    let DutyCycle::Steps(profile) = &sample.scenario.duty else { panic!("step profile") };
    assert_eq!(profile.steps[2].drive, Drive::Current(-0.6 * CELL_CAPACITY_COULOMB / 3600.0));

    // Nothing else moves, and the spec is the file's.
    assert_eq!(sample.uncertainty, base.uncertainty);
    assert_eq!(cell.positive, base.scenario.cell.positive);
    assert_eq!(cell.negative.thickness_m, base.scenario.cell.negative.thickness_m);
    assert_eq!(sample.plan.usage.ambient_k, Ambient::Constant(27.5 + ZERO_CELSIUS_K), "the plan follows ambient_c");
    assert_eq!((sample.plan.horizon, sample.plan.end_of_life), (base.plan.horizon, base.plan.end_of_life));

    // The text form gives the same values, and a draw after a `--set` value for the same path wins.
    let text_form = load_scenario(&path, &overrides(&["cell.negative.particle_radius_um=4.5"])).expect("valid");
    let after_set =
        [overrides(&["cell.negative.particle_radius_um=5.5"]), numbers(&[("cell.negative.particle_radius_um", 4.5)])]
            .concat();
    let drawn_last = load_scenario(&path, &after_set).expect("valid");
    assert_eq!(text_form.scenario.cell, drawn_last.scenario.cell);
    assert_close(drawn_last.scenario.cell.negative.particle_radius_m, 4.5e-6);

    // A draw the cell rejects comes back against the path it set.
    let error = load_scenario(&path, &numbers(&[("cell.resistance.ohmic_mohm", -1.0)])).expect_err("negative draw");
    assert_eq!(error.to_string(), "--set: cell.resistance.ohmic_mohm: must be zero or positive, found -1");
}

#[test]
fn detects_file_kinds() {
    let files = Files::new();
    assert_eq!(detect_kind(&files.write("c.toml", CELL)).ok(), Some(InputKind::Cell));
    assert_eq!(detect_kind(&files.write("p.toml", PROFILE)).ok(), Some(InputKind::Profile));
    assert_eq!(detect_kind(&files.write("s.toml", SCENARIO)).ok(), Some(InputKind::Scenario));
    assert_eq!(detect_kind(&files.write("d.csv", "time_s,current_a\n")).ok(), Some(InputKind::Series));
    let unknown = detect_kind(&files.write("x.toml", "name = \"x\"\n")).expect_err("no known table");
    assert!(unknown.rule.contains("expected a cell file"), "{unknown}");
    assert!(detect_kind(&files.write("x.txt", "")).is_err());
}

/// Every prefix of every valid file is some input a user could save by accident.
#[test]
fn truncated_files_never_panic() {
    let files = Files::new();
    let (cell, scenario) = (cell_with_mechanisms(), format!("{}{UNCERTAINTY}", scenario_with_plan()));
    for (name, text) in [("cell.toml", cell.as_str()), ("profile.toml", PROFILE), ("scenario.toml", scenario.as_str())]
    {
        for end in (0..=text.len()).filter(|&i| text.is_char_boundary(i)) {
            let path = files.write(name, &text[..end]);
            let _ = detect_kind(&path);
            let _ = load_cell(&path, &[]);
            let _ = load_duty(&path, CELL_CAPACITY_COULOMB, &[]);
            let _ = load_scenario(&path, &[]);
        }
    }
    let csv = "time_s,current_a,ambient_c\n0,1.5,20\n10,-2,21\n20,0,21\n";
    for end in 0..=csv.len() {
        let _ = load_series(&files.write("duty.csv", &csv[..end]));
    }
}

/// The shipped demo scenarios must stay loadable as the formats evolve, each with a horizon and
/// with aging mechanisms in its cell.
#[test]
fn demo_scenarios_load() {
    let examples = common::repo("examples");
    let Ok(entries) = std::fs::read_dir(&examples) else {
        return;
    };
    let mut loaded_names = Vec::new();
    for path in entries.filter_map(|e| e.ok()).map(|e| e.path()) {
        if path.extension().is_some_and(|e| e == "toml") && detect_kind(&path).ok() == Some(InputKind::Scenario) {
            let loaded = load_scenario(&path, &[]).unwrap_or_else(|error| panic!("{error}"));
            assert!(loaded.plan.horizon.is_some(), "{}: demo scenarios give a horizon", path.display());
            let aging = &loaded.plan.aging;
            assert!(aging.film.is_some() && aging.neg_cracking.is_some(), "{}: demo cell has aging", path.display());
            assert_eq!(loaded.plan.calibration, None, "demo parameters are uncalibrated");
            loaded_names.push((path.file_name().map(|n| n.to_string_lossy().into_owned()), loaded));
        }
    }
    let storage = loaded_names
        .iter()
        .find(|(name, _)| name.as_deref() == Some("van-depot-storage.toml"))
        .map(|(_, loaded)| loaded)
        .expect("the storage demo is a scenario");
    assert_eq!(storage.plan.usage.cycles_per_day, 0.0, "storage only");
    let ferry = loaded_names
        .iter()
        .find(|(name, _)| name.as_deref() == Some("harbour-ferry.toml"))
        .map(|(_, loaded)| loaded)
        .expect("the ferry demo is a scenario");
    assert!(matches!(ferry.plan.usage.ambient_k, Ambient::Monthly(_)));
    assert_eq!(ferry.plan.aging.pos_cracking, None, "switched off for nano-particles");

    // The bands demo is the overnight van scenario plus an uncertainty section.
    let find = |wanted: &str| {
        loaded_names
            .iter()
            .find(|(name, _)| name.as_deref() == Some(wanted))
            .map(|(_, loaded)| loaded)
            .unwrap_or_else(|| panic!("{wanted} is a scenario"))
    };
    let (bands, overnight) = (find("van-fleet-bands.toml"), find("van-fleet-overnight.toml"));
    assert_eq!(bands.scenario.cell, overnight.scenario.cell);
    assert_eq!(bands.scenario.duty, overnight.scenario.duty);
    assert_eq!(bands.scenario.ambient_k, overnight.scenario.ambient_k);
    assert_eq!(bands.plan, overnight.plan);
    let spread = &bands.uncertainty;
    assert!((4..=6).contains(&spread.parameters.len()), "{spread:?}");
    assert_eq!(spread.sampling, Sampling::LatinHypercube);
    assert_eq!(spread.groups.len(), 1);
    assert!(overnight.uncertainty.parameters.is_empty());
    // The pack demo spreads its cells only (every parameter drawn per cell).
    let pack = find("home-storage-pack.toml");
    assert!(pack.scenario.pack.is_some());
    assert!(!pack.uncertainty.parameters.is_empty() && pack.uncertainty.parameters.iter().all(|p| p.per_cell));
    for (name, loaded) in &loaded_names {
        if name.as_deref() != Some("van-fleet-bands.toml") && name.as_deref() != Some("home-storage-pack.toml") {
            assert_eq!(loaded.uncertainty, UncertaintySpec::default(), "{name:?}");
        }
    }
}

#[test]
fn film_breathing_table_loads_and_is_refused_on_the_positive() {
    let loaded = fadecast::input::load_scenario(&common::repo(common::OVERNIGHT), &[]).unwrap();
    let breathing = loaded.plan.aging.film_breathing.expect("on in the 5 Ah demo cell");
    assert_eq!(breathing.exponent, 3.5);
    assert!((breathing.activation_j_mol - 22e3).abs() < 1e-9);
    let off = fadecast::input::parse_override("cell.negative.film_breathing.enabled=false").unwrap();
    let loaded = fadecast::input::load_scenario(&common::repo(common::OVERNIGHT), &[off]).unwrap();
    assert!(loaded.plan.aging.film_breathing.is_none());
    let misplaced = fadecast::input::parse_override("cell.positive.film_breathing.rate_per_cycle=0.1").unwrap();
    let error = fadecast::input::load_scenario(&common::repo(common::OVERNIGHT), &[misplaced]).unwrap_err();
    assert!(error.to_string().contains("positive.film_breathing"), "{error}");
}
