//! Domain records and the parsing that turns user input into them. Code outside this module
//! only ever holds values that passed these checks.

#[macro_use]
mod enums;
mod audit;
mod cycles;
mod dryers;
pub mod fields;
pub mod records;
pub mod runs;
pub mod traces;

pub use audit::*;
pub use cycles::*;
pub use dryers::*;
pub use enums::*;
pub use fields::{limits, number_text, FieldError, FieldErrors};
pub use records::*;
