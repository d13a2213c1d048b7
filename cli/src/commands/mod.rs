//! Stage 2: the commands. Each takes the validated [`crate::plan::Plan`], drives the mesher
//! and the engine, and hands one results type to [`crate::results`]; none imports another.

pub mod args;
pub mod check;
pub mod debug;
pub mod mesh;
pub mod solve;
