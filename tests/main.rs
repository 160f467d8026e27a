//! Integration tests: pages and API in-process against a real database (a fresh SQLite
//! file per test, and a fresh PostgreSQL database per test when `TEST_DATABASE_URL` is set),
//! plus the real binary.

mod form_html;
mod helpers;
mod host;

mod access;
mod api;
mod audit_trail;
mod backup;
mod binary;
mod calc;
mod concurrency;
mod cycles;
mod dryers;
mod errors;
mod forms;
mod injection;
mod pages;
mod review;
mod run_loop;
mod runs;
mod science_pages;
mod sessions;
mod storage;
mod team_pages;
mod traces;
