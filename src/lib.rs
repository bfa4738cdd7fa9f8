//! acquest estimates what buying data would do for a classifier about people: a new attribute for
//! the records held, or more records, overall or for one group. It measures accuracy and group
//! fairness over repeated seeded trials and reports them with intervals. The library computes
//! and never prints; the binary parses flags, calls it and renders.
//!
//! The stages, each a folder that uses only those listed before it (and `report`, the output
//! contract, which uses nothing that computes):
//! - [`settings`]: raw choices, the project file, validated settings;
//! - [`data`]: reading files, groups, the cost sheet;
//! - [`stats`]: rates, the disparity measures, statistical tests, curve families;
//! - [`engine`]: random streams, encoding, model families, trials;
//! - [`estimate`]: baseline, learning curves, the appraisal of options, the backtest;
//! - [`decide`]: the budgeted selection and the frontier;
//! - [`report`]: the serde types of every report;
//! - [`render`]: terminal text, Markdown, HTML and SVG, each from a report.

#![warn(missing_docs)]

pub mod data;
pub mod decide;
pub mod demo;
pub mod engine;
pub mod error;
pub mod estimate;
pub mod files;
pub mod render;
pub mod report;
pub mod settings;
pub mod stats;

pub use error::{Error, Result};

#[cfg(test)]
mod tests {
    /// The output contract and its renderers name nothing that computes, so that an edit to an
    /// estimator or the solver cannot change a report's shape or a chart unseen.
    #[test]
    fn the_contract_and_the_renderers_use_only_the_contract() {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
        for folder in ["report", "render"] {
            for entry in std::fs::read_dir(root.join(folder)).unwrap() {
                let path = entry.unwrap().path();
                let text = std::fs::read_to_string(&path).unwrap();
                for (at, _) in text.match_indices("crate::") {
                    let rest = &text[at + "crate::".len()..];
                    assert!(
                        rest.starts_with("report"),
                        "{} names crate::{}",
                        path.display(),
                        rest.split(|c: char| !c.is_alphanumeric() && c != '_')
                            .next()
                            .unwrap_or("")
                    );
                }
            }
        }
    }
}
