//! Leaves that know nothing of frames or files: rates and disparity measures, statistical tests
//! and intervals, and the learning-curve families with their fitting.

pub mod curve;
pub mod fairness;
pub mod metrics;
pub mod trend;
