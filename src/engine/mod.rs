//! What runs models: seeded random streams, the encoding fitted on a trial's training rows, the
//! model families, and the trials that fit and score them.

pub mod encode;
pub mod model;
pub mod split;
pub mod streams;
pub mod trial;
