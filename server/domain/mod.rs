//! Domain records and the parsing that turns user input into them. Code outside this module
//! only ever holds values that passed these checks.

mod cycles;
mod enums;
pub mod fields;
pub mod records;

pub use cycles::*;
pub use enums::*;
pub use fields::{limits, number_text, FieldError, FieldErrors};
pub use records::*;
