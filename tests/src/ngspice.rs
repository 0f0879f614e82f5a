//! Runs Debian's ngspice (a general-purpose open circuit simulator, `/usr/bin/ngspice`) in batch
//! mode on a deck Hysteron exported, as the independent reference of the SPICE checks.
//!
//! Every run gets its own folder (process id and a run counter), since the tests of one file run in
//! parallel threads of one process. When ngspice cannot be started, the functions return `None` and
//! print why, so that a machine without it skips the comparison instead of failing; `cargo xtask
//! setup` installs it (Debian package ngspice).

use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};

/// A fresh folder for one ngspice run.
fn run_dir() -> Option<PathBuf> {
    static RUNS: AtomicUsize = AtomicUsize::new(0);
    let run = RUNS.fetch_add(1, Ordering::Relaxed);
    let dir = std::env::temp_dir().join(format!("hysteron_ngspice_{}_{run}", std::process::id()));
    std::fs::create_dir_all(&dir).ok()?;
    Some(dir)
}

/// True when ngspice can be started; otherwise prints that the comparison is skipped.
pub fn available() -> bool {
    let ok = std::process::Command::new("ngspice").arg("--version").output().is_ok();
    if !ok {
        println!("skipped: ngspice is not installed (`cargo xtask setup` installs it; Debian package ngspice)");
    }
    ok
}

/// Runs `deck` with the `.control` block `control` in place of its final `.end` (`{dir}` in
/// `control` is replaced by the run's folder); returns ngspice's standard output and the folder, or
/// `None` (with the reason printed) when ngspice cannot be run. Panics with ngspice's output when it
/// reports a failure. The caller removes the folder once it has read it.
pub fn run(deck: &str, control: &str) -> Option<(String, PathBuf)> {
    let dir = run_dir()?;
    let body = deck.trim_end().strip_suffix(".end").unwrap_or(deck.trim_end());
    let control = control.replace("{dir}", &dir.display().to_string());
    let cir = dir.join("deck.cir");
    std::fs::write(&cir, format!("{body}\n.control\n{control}\nquit\n.endc\n.end\n")).ok()?;
    let out = match std::process::Command::new("ngspice").arg("-b").arg(&cir).output() {
        Ok(o) => o,
        Err(e) => {
            println!("skipped: ngspice cannot be run ({e}); `cargo xtask setup` installs it (Debian package ngspice)");
            return None;
        }
    };
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    assert!(out.status.success(), "ngspice failed on {}:\n{text}\n{}", cir.display(), String::from_utf8_lossy(&out.stderr));
    Some((text, dir))
}

/// Runs `analysis` (e.g. `dc VIN 0 5 1e-3` or `tran 1n 10u 0 1n`) and returns the rows ngspice's
/// `wrdata` writes for `vectors` (e.g. `v(out) v(field)`): the sweep variable or time first, then one
/// column per vector. `None` when ngspice cannot be run.
pub fn table(deck: &str, analysis: &str, vectors: &str) -> Option<Vec<Vec<f64>>> {
    let (_, dir) = run(deck, &format!("set wr_singlescale\n{analysis}\nwrdata {{dir}}/data.txt {vectors}"))?;
    let data = dir.join("data.txt");
    let rows = std::fs::read_to_string(&data).unwrap_or_else(|e| panic!("{}: {e}", data.display()));
    // Read: the run's folder goes (one kept on a failure above, to look into).
    std::fs::remove_dir_all(&dir).ok();
    Some(
        rows.lines()
            .map(|l| l.split_whitespace().filter_map(|x| x.parse::<f64>().ok()).collect::<Vec<f64>>())
            .filter(|r| !r.is_empty())
            .collect(),
    )
}

/// A DC sweep of the source `VIN` from `from` to `to` in 1 mV steps: (vin, v(out)) pairs.
pub fn dc_sweep(deck: &str, from: f64, to: f64) -> Option<Vec<(f64, f64)>> {
    let step = if to > from { 1e-3 } else { -1e-3 };
    let rows = table(deck, &format!("dc VIN {from} {to} {step}"), "v(out)")?;
    Some(rows.iter().filter(|r| r.len() >= 2).map(|r| (r[0], r[1])).collect())
}

/// The value printed by ngspice's `print v(node)` ("v(n) = 3.000000e+00").
pub fn printed(text: &str, name: &str) -> f64 {
    text.lines()
        .find_map(|l| {
            let (k, v) = l.split_once('=')?;
            (k.trim() == name).then(|| v.trim().parse::<f64>().ok()).flatten()
        })
        .unwrap_or_else(|| panic!("no {name} in:\n{text}"))
}

/// The first x at or after `after` where the (x, y) table crosses `level` in either direction, by
/// linear interpolation between the two rows around it.
pub fn crossing_after(rows: &[(f64, f64)], level: f64, after: f64) -> Option<f64> {
    rows.windows(2).find_map(|w| {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        (x0 >= after && (y0 - level) * (y1 - level) <= 0.0 && y0 != y1).then(|| x0 + (level - y0) * (x1 - x0) / (y1 - y0))
    })
}

/// The first x where the (x, y) table crosses `level` (for a swept input: the input at the trip).
pub fn crossing(rows: &[(f64, f64)], level: f64) -> Option<f64> {
    crossing_after(rows, level, f64::NEG_INFINITY)
}
