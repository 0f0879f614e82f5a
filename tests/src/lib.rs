//! Shared fixtures for Hysteron's reference checks and browser end-to-end tests.
//!
//! The browser fixtures serve the built page (`dist/`, made by `trunk build --release`, which
//! `cargo xtask test` runs first) from a tiny static file server on 127.0.0.1 and drive Debian's
//! headless Chromium through chromedriver with fantoccini.

pub mod browser;
pub mod server;
pub mod designs;
pub mod mutate;
