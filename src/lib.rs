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

pub mod data;
pub mod decide;
pub mod demo;
pub mod engine;
pub mod error;
pub mod estimate;
pub mod render;
pub mod report;
pub mod settings;
pub mod stats;

pub use error::{Error, Result};
