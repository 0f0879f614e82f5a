//! Shared fixtures for Hysteron's reference checks and browser end-to-end tests.
//!
//! The browser fixtures serve the built page (`dist/`, made by `trunk build --release`, which
//! `cargo xtask test` runs first) from a tiny static file server on 127.0.0.1 and drive Debian's
//! headless Chromium through chromedriver with fantoccini.

pub mod browser;
pub mod captures;
pub mod server;
pub mod designs;
pub mod mutate;
pub mod ngspice;
pub mod nodal;
pub mod sampling;

/// Number of cases for a property test: `base` in CI and ordinary runs, `base` times the whole number
/// in `HYSTERON_PROPTEST_SCALE` when exploring (`cargo xtask explore` sets it, with a fresh seed).
///
/// The seed itself is proptest's: `PROPTEST_RNG_SEED` (a fixed value in `cargo xtask test`, unset —
/// random — in `cargo xtask explore`). Failures found are saved in the test's
/// `*.proptest-regressions` file and replayed first on every run.
pub fn proptest_cases(base: u32) -> u32 {
    let scale = std::env::var("HYSTERON_PROPTEST_SCALE").ok().and_then(|s| s.trim().parse::<u32>().ok()).unwrap_or(1);
    base.saturating_mul(scale.max(1))
}
