//! acquest estimates what buying data would do for a classifier about people: a new attribute for
//! the records held, or more records, overall or for one group. It measures accuracy and group
//! fairness over repeated seeded trials and reports them with intervals. The library computes
//! and never prints; the binary parses flags, calls it and renders.

pub mod appraise;
pub mod backtest;
pub mod baseline;
pub mod costs;
pub mod curve;
pub mod data;
pub mod demo;
pub mod encode;
pub mod error;
pub mod learning;
pub mod metrics;
pub mod model;
pub mod plan;
pub mod render;
pub mod report;
pub mod settings;
pub mod trial;

pub use error::{Error, Result};
