//! Estimates made from trials: the baseline, learning curves, the appraisal of every option of
//! the cost sheet, and the backtest that checks the appraisal against purchases made for real.

pub mod appraise;
pub mod backtest;
pub mod baseline;
mod growth;
mod held;
pub mod learning;
mod pilot;
mod rank;
mod rows;
pub mod score;
