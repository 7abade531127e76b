//! End-to-end tests of the `ringdrag` service: each test starts the real binary on a free port
//! and talks HTTP to it (one test binary, linked once).
//!
//! Run with `cargo test --release -p ringdrag-service --test api`.

mod access;
mod bounded;
mod concurrency;
mod configurator;
mod connections;
mod csv_answers;
mod error_texts;
mod errors;
mod examples;
mod force_curve;
mod helpers;
mod materials;
mod openapi;
mod operations;
mod pages;
mod plots;
mod shedding;
mod simulate;
mod size;
mod sweep;
mod tolerances;
