//! The one integration-test binary: every test module is compiled here.
//!
//! - `analytic`: the field solver against closed forms and published results;
//! - `solver`: path-level physics (superposition, images, symmetry);
//! - `geometry`: web path tangents and arc lengths through the public API;
//! - `validation`: bad input refused with a located message;
//! - `cli`: the binary end to end.

mod analytic;
mod cli;
mod geometry;
mod reports;
mod solver;
mod util;
mod validation;
