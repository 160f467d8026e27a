//! Glasspoint science: critical temperatures of frozen and dried formulations and the
//! primary-drying model of a vial. Pure computation: no web, SQL or template dependency.
//!
//! Inside, every quantity is SI (K, Pa, kg, m, s) unless a name says otherwise; units are
//! named at the edges (`shelf_temp_c`, `pressure_pa`).
#![deny(clippy::float_cmp)]

pub mod annealing;
pub mod batch;
pub mod cake;
pub mod calc;
pub mod composition;
pub mod design_space;
pub mod dryer;
pub mod drying;
pub mod dsc;
pub mod error;
pub mod fit;
pub mod gauge;
pub mod ice;
pub mod limit;
pub mod mixture;
pub mod roots;
pub mod runs;
pub mod suggest;
pub mod units;
pub mod verdict;

pub use error::InputError;
