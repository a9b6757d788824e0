//! Output writers. Each writer only turns results into bytes or text; [`write_atomic`] and
//! [`write_all_atomic`] are the one place that puts bytes on disk, so a failed run never leaves
//! a half-written file.

mod atomic;
mod bands_svg;
mod compare;
mod compare_svg;
mod cycle_csv;
mod cycle_svg;
mod ensemble;
mod fade_csv;
mod fade_svg;
mod fit;
mod fit_svg;
mod forecast_json;
mod forecast_text;
mod html;
mod inputs;
mod journal;
mod outcome;
mod pack;
mod pack_svg;
mod plot;
pub mod schema;
mod summary;
pub mod text;

pub use atomic::{write_all_atomic, write_atomic, write_atomic_streamed};
pub use bands_svg::{bands_svg, rank_correlation_noise, readable_path, sensitivity_svg, ThresholdsPct};
pub use compare::{
    compare_cautions, compare_csv, compare_csv_header, compare_text, table_csv, table_text, TABLE_CSV_HEADER,
};
pub use compare_svg::compare_svg;
pub use cycle_csv::{cycle_csv, CYCLE_CSV_HEADER};
pub use cycle_svg::cycle_svg;
pub use ensemble::{
    bands_csv, ensemble_json, ensemble_notes, ensemble_text, percent_label, samples_csv, statistics_refused_text,
};
pub use fade_csv::{fade_columns, fade_csv};
pub use fade_svg::fade_svg;
pub use fit::{fit_cautions, fit_json, fit_text, fit_warning_text, fitted_cell_toml, uncertainty_toml};
pub use fit_svg::fit_svg;
pub use forecast_json::forecast_json;
pub use forecast_text::{forecast_text, forecast_warning_lines};
pub use html::{
    bands_tables, calibration_status, compare_tables, fit_tables, forecast_tables, report_html, HtmlTable, ReportPage,
};
pub use inputs::{
    aging_data_report, cell_report, describe_step, duty_report, fit_report, series_totals, uncertainty_report,
    SeriesTotals,
};
pub use journal::{decode_journal, encode_record, JournalEnding, JournalRead};
pub use outcome::{
    counted_warning_lines, counted_warnings_json, failure_text, stop_json, stop_text, warning_json, warning_kind_text,
    warning_text,
};
pub use pack::{pack_csv, pack_text, PACK_CSV_HEADER};
pub use pack_svg::pack_svg;
pub use summary::{cycle_cautions, cycle_summary};

use std::path::PathBuf;
use thiserror::Error;

#[derive(Debug, Error)]
pub enum ReportError {
    #[error("could not format CSV: {0}")]
    Csv(#[from] csv::Error),
    #[error("could not draw the plot: {0}")]
    Plot(String),
    #[error("could not format JSON: {0}")]
    Json(#[from] serde_json::Error),
    #[error("{}: could not write: {source} (check that the --out directory can be written)", path.display())]
    Io { path: PathBuf, source: std::io::Error },
}
