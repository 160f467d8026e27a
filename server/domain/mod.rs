//! Domain records and the parsing that turns user input into them. Code outside this module
//! only ever holds values that passed these checks.

#[macro_use]
mod enums;
mod audit;
mod cycles;
pub mod fields;
pub mod records;

pub use audit::*;
pub use cycles::*;
pub use enums::*;
pub use fields::{limits, number_text, FieldError, FieldErrors};
pub use records::*;
