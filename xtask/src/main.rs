//! Set-up commands for a fresh machine.
//!
//! - `cargo xtask serve`: installs whatever is missing, builds the page and serves it on 127.0.0.1.
//! - `cargo xtask test`: installs whatever is missing (browser included) and runs every test:
//!   unit, property, reference, wasm and browser end-to-end. Property tests run with the fixed seed
//!   [`CI_PROPTEST_SEED`], so a run is repeatable and CI never fails on a new random draw.
//! - `cargo xtask single-file`: builds the page and writes it as one self-contained HTML file,
//!   `dist-single/hysteron.html`, that works opened from disk (see `single.rs`).
//! - `cargo xtask explore [SCALE] [SEED]`: runs only the property tests, with a fresh random seed (or
//!   SEED) and SCALE times as many cases (default 10), to look for new failures; it prints the seed.
//!
//! Each step prints what it checks and what it installs.

mod csp;
mod offline;
mod single;
mod split;

use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};

/// Trunk version that builds on rustc 1.95 (0.22 needs a newer compiler).
const TRUNK_VERSION: &str = "0.21.14";
/// binaryen release whose wasm-opt produces pages that load (Debian's 108 does not).
const BINARYEN_NPM: &str = "binaryen@132.0.0";
const WASM_OPT_VERSION: &str = "version 132";
/// The proptest seed every `cargo xtask test` run uses (proptest reads `PROPTEST_RNG_SEED`). Failures
/// saved in the `*.proptest-regressions` files are replayed first, whatever the seed.
const CI_PROPTEST_SEED: u64 = 20_261_202;
/// Set for Trunk's builds: the page is compiled with split points and cut into pieces loaded on
/// demand (`app/build.rs`, `split.rs`).
const SPLIT_ENV: &str = "HYSTERON_SPLIT";
/// How many times the usual number of cases `cargo xtask explore` runs by default.
const EXPLORE_SCALE: u32 = 10;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let root = workspace_root();
    let result = match args.first().map(String::as_str) {
        Some("serve") => serve(&root, &args[1..]),
        Some("test") => test(&root, &args[1..]),
        Some("explore") => explore(&root, &args[1..]),
        Some("build") => setup_build_tools(&root).and_then(|_| build_page(&root)),
        Some("setup") => setup_build_tools(&root).and_then(|_| setup_browser()),
        Some("csp") => csp::write_policy(),
        // Trunk's post-build hook: the policy first (it changes index.html), then the service worker's
        // file list and version (a hash over every built file).
        // `--from-dist`: from the dist/ already built, without building again.
        Some("single-file") if args.get(1).map(String::as_str) == Some("--from-dist") => single::write_single_file(&root),
        Some("single-file") => setup_build_tools(&root).and_then(|_| build_page(&root)).and_then(|_| single::write_single_file(&root)),
        Some("post-build") => split::split_page(&root).and_then(|_| csp::write_policy()).and_then(|_| offline::write_service_worker()),
        _ => {
            eprintln!("usage: cargo xtask <serve|test|explore|build|setup>");
            eprintln!("  serve   install what is missing, build the page, serve it on http://127.0.0.1:8080");
            eprintln!("  test    install what is missing, run every test (unit, property, reference, wasm, browser)");
            eprintln!("  single-file  build the page as one HTML file that opens from disk: dist-single/hysteron.html");
            eprintln!("               (--from-dist: from the dist/ already built)");
            eprintln!("  explore [SCALE] [SEED]  property tests only, fresh seed (or SEED), SCALE× the cases (default {EXPLORE_SCALE})");
            return ExitCode::from(2);
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("xtask: {e}");
            ExitCode::FAILURE
        }
    }
}

fn workspace_root() -> PathBuf {
    let here = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    here.parent().map(Path::to_path_buf).unwrap_or(here)
}

fn say(msg: &str) {
    println!("[xtask] {msg}");
}

/// Runs a command, echoing it; fails with its exit status.
fn run(cmd: &mut Command) -> Result<(), String> {
    say(&format!("running: {cmd:?}"));
    let status = cmd.status().map_err(|e| format!("cannot start {cmd:?}: {e}"))?;
    if status.success() { Ok(()) } else { Err(format!("{cmd:?} failed with {status}")) }
}

/// The first line a command prints with `--version`, if it runs.
fn version_of(program: &str, arg: &str) -> Option<String> {
    let out = Command::new(program).arg(arg).output().ok()?;
    if !out.status.success() {
        return None;
    }
    let text = String::from_utf8_lossy(&out.stdout).to_string() + &String::from_utf8_lossy(&out.stderr);
    text.lines().next().map(|l| l.trim().to_string())
}

/// The version of a package recorded in Cargo.lock.
fn locked_version(root: &Path, package: &str) -> Result<String, String> {
    let lock = std::fs::read_to_string(root.join("Cargo.lock")).map_err(|e| format!("cannot read Cargo.lock: {e}"))?;
    let needle = format!("name = \"{package}\"\nversion = \"");
    let start = lock.find(&needle).ok_or_else(|| format!("{package} is not in Cargo.lock"))? + needle.len();
    let end = lock[start..].find('"').ok_or("Cargo.lock is malformed")? + start;
    Ok(lock[start..end].to_string())
}

fn is_root() -> bool {
    Command::new("id").arg("-u").output().map(|o| String::from_utf8_lossy(&o.stdout).trim() == "0").unwrap_or(false)
}

fn setup_build_tools(root: &Path) -> Result<(), String> {
    say("checking the wasm32-unknown-unknown target");
    let installed = Command::new("rustup")
        .args(["target", "list", "--installed"])
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).contains("wasm32-unknown-unknown"))
        .unwrap_or(false);
    if installed {
        say("wasm32-unknown-unknown: present");
    } else {
        say("installing the wasm32-unknown-unknown target");
        run(Command::new("rustup").args(["target", "add", "wasm32-unknown-unknown"]))?;
    }

    say(&format!("checking trunk {TRUNK_VERSION}"));
    match version_of("trunk", "--version") {
        Some(v) if v.contains(TRUNK_VERSION) => say(&format!("trunk: present ({v})")),
        other => {
            say(&format!("installing trunk {TRUNK_VERSION} (found: {other:?}); this takes about 12 minutes on 2 cores"));
            run(Command::new("cargo").args(["install", "--locked", &format!("trunk@{TRUNK_VERSION}")]))?;
        }
    }

    let wb = locked_version(root, "wasm-bindgen")?;
    say(&format!("checking wasm-bindgen-cli {wb} (the version in Cargo.lock)"));
    match version_of("wasm-bindgen", "--version") {
        Some(v) if v.ends_with(&wb) => say(&format!("wasm-bindgen: present ({v})")),
        other => {
            say(&format!("installing wasm-bindgen-cli {wb} (found: {other:?}); about 4 minutes"));
            // `--locked` fails for this crate on the registry mirror (its lock names a yanked version).
            run(Command::new("cargo").args(["install", "wasm-bindgen-cli", "--version", &format!("={wb}")]))?;
        }
    }

    say("checking wasm-opt (binaryen 132; Debian's 108 builds pages that die on load)");
    match version_of("wasm-opt", "--version") {
        Some(v) if v.contains(WASM_OPT_VERSION) => say(&format!("wasm-opt: present ({v})")),
        other => {
            say(&format!("installing {BINARYEN_NPM} with npm (found: {other:?})"));
            if version_of("npm", "--version").is_none() {
                return Err("npm is needed to install binaryen 132 (wasm-opt): install Node.js and npm".into());
            }
            run(Command::new("npm").args(["install", "-g", BINARYEN_NPM]))?;
            match version_of("wasm-opt", "--version") {
                Some(v) if v.contains(WASM_OPT_VERSION) => say(&format!("wasm-opt: installed ({v})")),
                v => {
                    return Err(format!(
                        "wasm-opt on PATH is {v:?}, not binaryen 132: remove the older one (e.g. `apt-get remove binaryen`) and run again"
                    ))
                }
            }
        }
    }
    Ok(())
}

fn apt_install(packages: &[&str]) -> Result<(), String> {
    if !is_root() {
        return Err(format!(
            "missing {}: install them (Debian: `sudo apt-get install -y {}`) and run again",
            packages.join(", "),
            packages.join(" ")
        ));
    }
    say(&format!("installing {} with apt-get", packages.join(", ")));
    run(Command::new("apt-get").arg("update").arg("-q"))?;
    run(Command::new("apt-get").args(["install", "-y", "-q"]).args(packages).env("DEBIAN_FRONTEND", "noninteractive"))
}

fn setup_browser() -> Result<(), String> {
    say("checking chromium, chromedriver and pdfinfo (for browser tests)");
    let mut missing = Vec::new();
    if version_of("chromium", "--version").is_none() {
        missing.push("chromium");
    }
    if version_of("chromedriver", "--version").is_none() {
        missing.push("chromium-driver");
    }
    if version_of("pdfinfo", "-v").is_none() {
        missing.push("poppler-utils");
    }
    if version_of("ngspice", "--version").is_none() {
        missing.push("ngspice"); // tests/tests/reference_bjt_temperature.rs runs it in batch mode
    }
    if version_of("pkill", "-V").is_none() || version_of("pgrep", "-V").is_none() {
        missing.push("procps"); // tests/src/browser.rs stops a failed test's browser by its profile
    }
    if missing.is_empty() {
        say("browser tools: present");
        Ok(())
    } else {
        apt_install(&missing)
    }
}

fn build_page(root: &Path) -> Result<(), String> {
    say("building the page with trunk (release)");
    run(Command::new("trunk").args(["build", "--release"]).env(SPLIT_ENV, "1").current_dir(root))
}

fn serve(root: &Path, rest: &[String]) -> Result<(), String> {
    setup_build_tools(root)?;
    let port = rest.first().cloned().unwrap_or_else(|| "8080".into());
    say(&format!("serving the page on http://127.0.0.1:{port}/ (Ctrl+C stops)"));
    run(Command::new("trunk")
        .args(["serve", "--release", "--address", "127.0.0.1", "--port", &port])
        .env(SPLIT_ENV, "1")
        .current_dir(root))
}

/// `cargo` for one step of a whole test run, which builds every crate once: without incremental
/// caches (about 2 GB), which would only fill the disk.
fn cargo_once() -> Command {
    let mut cmd = Command::new("cargo");
    cmd.env("CARGO_INCREMENTAL", "0");
    cmd
}

/// What a clean `cargo xtask test` leaves in `target/`, gigabytes, with some room (DEVELOPERS.md,
/// "How to test": about 4.1 GB measured).
const TEST_DISK_GB: f64 = 5.0;

/// Free space on the disk holding `dir`, gigabytes, as `df` reports it; `None` when it cannot tell.
fn free_gb(dir: &Path) -> Option<f64> {
    let out = Command::new("df").args(["-Pk"]).arg(dir).output().ok()?;
    let text = String::from_utf8_lossy(&out.stdout);
    let kib: f64 = text.lines().nth(1)?.split_whitespace().nth(3)?.parse().ok()?;
    Some(kib / 1024.0 / 1024.0)
}

/// Says so up front when the disk looks too full for a whole test run (a full disk otherwise
/// shows up minutes later as a compiler crash).
fn warn_if_disk_low(root: &Path) {
    if let Some(free) = free_gb(root) {
        if free < TEST_DISK_GB {
            say(&format!(
                "warning: {free:.1} GB free on the disk holding {}; a clean test run writes about {TEST_DISK_GB:.0} GB into target/ (free some space, or `cargo clean`, if the build fails with 'No space left on device')",
                root.display()
            ));
        }
    }
}

fn test(root: &Path, _rest: &[String]) -> Result<(), String> {
    warn_if_disk_low(root);
    setup_build_tools(root)?;
    setup_browser()?;
    build_page(root)?;
    single::write_single_file(root)?;
    say("native tests: unit, property, reference and browser end-to-end");
    say(&format!("property tests use the fixed seed PROPTEST_RNG_SEED={CI_PROPTEST_SEED} (fresh seeds: cargo xtask explore)"));
    run(cargo_once()
        .args(["test", "--workspace", "--exclude", "hysteron-app", "--no-fail-fast"])
        .env("PROPTEST_RNG_SEED", CI_PROPTEST_SEED.to_string())
        .env_remove("HYSTERON_PROPTEST_SCALE")
        .current_dir(root))?;
    say("the page crate's unit tests (plain data: stored records, kept results), native");
    run(cargo_once().args(["test", "-p", "hysteron-app", "--lib"]).current_dir(root))?;
    say("wasm tests: the core math and the page's own modules, compiled to wasm32 and run in headless Chromium");
    run(cargo_once()
        .args(["test", "-p", "hysteron-app", "--target", "wasm32-unknown-unknown", "--", "--nocapture"])
        .env("CHROMEDRIVER", "chromedriver")
        .env("WASM_BINDGEN_TEST_TIMEOUT", "120")
        .current_dir(root))?;
    say("every test passed");
    Ok(())
}

/// The test files under `tests/tests/` that hold property tests (a `proptest!` block).
fn property_test_files(root: &Path) -> Result<Vec<String>, String> {
    let dir = root.join("tests").join("tests");
    let entries = std::fs::read_dir(&dir).map_err(|e| format!("cannot list {}: {e}", dir.display()))?;
    let mut names = Vec::new();
    for entry in entries.flatten() {
        let path = entry.path();
        if path.extension().is_some_and(|x| x == "rs")
            && std::fs::read_to_string(&path).is_ok_and(|text| text.contains("proptest!"))
        {
            if let Some(stem) = path.file_stem().and_then(|s| s.to_str()) {
                names.push(stem.to_string());
            }
        }
    }
    names.sort();
    Ok(names)
}

/// A seed that differs from run to run (clock and process id); printed so a failure can be repeated.
fn fresh_seed() -> u64 {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos() as u64)
        .unwrap_or(0);
    // SplitMix64's finaliser (Steele, Lea and Flood, 2014, from memory) spreads nearby clock values.
    let mut z = nanos ^ (u64::from(std::process::id()) << 32);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// `cargo xtask explore [SCALE] [SEED]`: the property tests with a fresh seed and more cases.
fn explore(root: &Path, rest: &[String]) -> Result<(), String> {
    let scale = match rest.first() {
        Some(s) => s.parse::<u32>().ok().filter(|&n| n >= 1).ok_or_else(|| format!("SCALE must be a whole number ≥ 1, got {s:?}"))?,
        None => EXPLORE_SCALE,
    };
    let seed = match rest.get(1) {
        Some(s) => s.parse::<u64>().map_err(|_| format!("SEED must be a whole number, got {s:?}"))?,
        None => fresh_seed(),
    };
    let files = property_test_files(root)?;
    say(&format!("exploring {} property test files with seed {seed} and {scale}× the usual cases", files.len()));
    say(&format!("repeat this run with: cargo xtask explore {scale} {seed}"));
    say("a failure is saved in tests/tests/<file>.proptest-regressions: commit it, and every run replays it first");
    let mut cmd = Command::new("cargo");
    cmd.args(["test", "-p", "hysteron-tests"]);
    for f in &files {
        cmd.args(["--test", f]);
    }
    run(cmd.env("PROPTEST_RNG_SEED", seed.to_string()).env("HYSTERON_PROPTEST_SCALE", scale.to_string()).current_dir(root))?;
    say(&format!("no failure with seed {seed}"));
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_free_space_of_a_real_folder_is_read_from_df() {
        let free = free_gb(Path::new(env!("CARGO_MANIFEST_DIR"))).expect("df answers for the xtask's own folder");
        assert!(free.is_finite() && free >= 0.0, "{free}");
    }
}
