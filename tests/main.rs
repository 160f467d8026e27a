//! Integration tests: pages and API in-process against a real database (a fresh SQLite
//! file per test, and a fresh PostgreSQL database per test when `TEST_DATABASE_URL` is set),
//! plus the real binary.

mod form_html;
mod helpers;
mod host;

mod api;
mod backup;
mod binary;
mod calc;
mod cycles;
mod dryers;
mod errors;
mod forms;
mod pages;
mod science_pages;
mod storage;
