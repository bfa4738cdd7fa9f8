//! Decisions from the appraisal: the budgeted selection of options and the frontier of plans.

mod advice;
pub mod plan;
pub mod problem;
pub mod select;
