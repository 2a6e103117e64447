//! Reports: the data model of a check and one file per output format behind [`ReportFormat`].

mod csv;
pub mod environment;
mod findings;
pub mod html;
pub mod json;
pub mod junit;
pub mod model;
pub mod pair_check;
pub mod pair_heatmap;
pub mod provenance;
pub mod sentence;
mod svg;
mod terminal;
mod value;
mod write;

pub use self::csv::Csv;
pub use findings::FindingsWriter;
pub use html::Html;
pub use json::Json;
pub use junit::Junit;
pub use model::CheckReport;
pub use svg::Svg;
pub use terminal::Terminal;
pub use value::{display_value, BitsValue};
pub use write::{check_outputs, check_writable, is_stdout, write_atomic, write_atomic_with};

/// An output format of `check` reports.
pub trait ReportFormat {
    /// Short name ("json", "csv", …) for messages.
    fn name(&self) -> &'static str;
    /// Renders one report (`manifest` false) or the reports of a manifest run.
    fn render(&self, reports: &[CheckReport], manifest: bool) -> Result<String, String>;
}
