//! Fuzzing on the stable toolchain for a fixed budget (issue 13 "done when"): proptest at scale,
//! with fixed seeds, over the three entry points that read outside input:
//!
//! - the share-link decoder (`share::decode_link`) on mutated valid links,
//! - the CSV reader (`signal::csv::parse_csv`) on mutated captures with random options,
//! - the record evaluator (`evaluate::evaluate_json`) on catalog records with numeric fields at
//!   extremes (`hysteron_tests::mutate`).
//!
//! Each asserts: no panic; every number in a successful result finite; output within the reader's
//! stated memory bounds; and every single input within a time bound (the bounds are named beside
//! each check). The case counts below take about 65 s of test time in all (about 35 s wall, the three run in
//! parallel) on the 2-core CI machine in the test
//! profile (`hysteron-core` is built with opt-level 3 there); `FUZZ_SCALE=<factor>` runs more or
//! fewer. Each target prints its inputs per second and its slowest input.

use hysteron_core::evaluate::{evaluate_json, RecordResult};
use hysteron_core::share::{decode_link, encode_link, MAX_LINK_CHARS, MAX_RECORD_BYTES};
use hysteron_core::signal::csv::{parse_csv, write_csv, CsvOptions, CsvWriteOptions, DecimalMark, HeaderMode, Separator};
use hysteron_core::signal::{Times, MAX_SAMPLES};
use hysteron_tests::mutate::{catalog_values, check_finite, mutate};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use std::cell::Cell;
use std::time::{Duration, Instant};

fn scaled(cases: u32) -> u32 {
    let f: f64 = std::env::var("FUZZ_SCALE").ok().and_then(|s| s.parse().ok()).unwrap_or(1.0);
    ((cases as f64 * f).round() as u32).max(1)
}

fn runner(cases: u32, seed: u8) -> TestRunner {
    // Fixed seed; no shrinking beyond a few steps, no persistence file: a failure prints its input.
    let config = Config { cases: scaled(cases), failure_persistence: None, max_shrink_iters: 64, ..Config::default() };
    TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &[seed; 32]))
}

/// Times one input; keeps the slowest.
struct Clock {
    worst: Cell<Duration>,
    count: Cell<u64>,
    started: Instant,
}

impl Clock {
    fn new() -> Self {
        Clock { worst: Cell::new(Duration::ZERO), count: Cell::new(0), started: Instant::now() }
    }
    fn time<T>(&self, f: impl FnOnce() -> T) -> (T, Duration) {
        let t = Instant::now();
        let out = f();
        let d = t.elapsed();
        self.count.set(self.count.get() + 1);
        if d > self.worst.get() {
            self.worst.set(d);
        }
        (out, d)
    }
    fn report(&self, name: &str) {
        let total = self.started.elapsed().as_secs_f64();
        println!(
            "fuzz {name}: {} inputs in {total:.1} s ({:.0} inputs/s), slowest input {:.1} ms",
            self.count.get(),
            self.count.get() as f64 / total,
            self.worst.get().as_secs_f64() * 1e3
        );
    }
}

/// Bound on one link's decoding (and, when it decodes, its evaluation): measured worst 93–137 ms
/// (about 1,000–1,400 inputs per second, 2 cores shared with other builds); the bound leaves a
/// fifteenfold margin for a loaded CI machine.
const LINK_BOUND: Duration = Duration::from_millis(2_000);

#[test]
fn fuzz_link_decoder() {
    let links: Vec<String> = catalog_values()
        .iter()
        .map(|v| encode_link(&hysteron_core::record::DesignRecord::from_value(v.clone()).unwrap()))
        .collect();
    let clock = Clock::new();
    // An edit: (kind, position, byte).
    let edit = (0u8..7, any::<u32>(), any::<u8>());
    let strategy = (any::<u32>(), proptest::collection::vec(edit, 1..6));
    runner(40_000, 1)
        .run(&strategy, |(which, edits)| {
            let mut link: Vec<u8> = links[which as usize % links.len()].clone().into_bytes();
            for (kind, pos, byte) in edits {
                let at = if link.is_empty() { 0 } else { pos as usize % link.len() };
                // Base64url letters mostly, so some edits survive the alphabet check.
                const ALPHABET: &[u8] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_.=h1 %";
                let b = ALPHABET[byte as usize % ALPHABET.len()];
                match kind {
                    0 => {
                        if at < link.len() {
                            link[at] = b
                        }
                    }
                    1 => link.insert(at, b),
                    2 => {
                        if at < link.len() {
                            link.remove(at);
                        }
                    }
                    3 => link.truncate(at),
                    4 => link.extend_from_slice(b"AAAA"),
                    5 => {
                        let tail = link[at..].to_vec();
                        link.extend_from_slice(&tail)
                    }
                    _ => {
                        if at < link.len() {
                            link[at] ^= 1 << (byte % 8)
                        }
                    }
                }
            }
            let text = String::from_utf8_lossy(&link).into_owned();
            let (out, took) = clock.time(|| {
                let decoded = decode_link(&text);
                // A link that still decodes is a record: evaluate it too, and check its results.
                let evaluated = decoded.as_ref().ok().map(hysteron_core::evaluate::evaluate);
                (decoded, evaluated)
            });
            prop_assert!(took < LINK_BOUND, "{took:?} for {text}");
            if let (Ok(record), Some(e)) = out {
                // Memory: what a link yields is bounded by MAX_RECORD_BYTES of JSON.
                let size = serde_json::to_string(&record).unwrap().len();
                prop_assert!(size <= MAX_RECORD_BYTES, "{size} bytes from {text}");
                check_finite(&e).map_err(|m| TestCaseError::fail(format!("{m} for {text}")))?;
            }
            Ok(())
        })
        .unwrap();
    clock.report("link decoder");
    // Oversized input is refused before any work (the stated bound MAX_LINK_CHARS).
    let huge = format!("h1.{}", "A".repeat(MAX_LINK_CHARS + 1));
    let (r, took) = clock.time(|| decode_link(&huge));
    assert!(r.is_err() && took < LINK_BOUND, "{took:?}");
}

/// Bound on one CSV parse of up to about 30 kB: measured worst 12–16 ms (about 2,200–3,300
/// inputs per second); sixtyfold margin.
const CSV_BOUND: Duration = Duration::from_millis(1_000);

#[test]
fn fuzz_csv_reader() {
    // A valid capture: 400 samples of a noisy sine, written in every separator.
    let n = 400;
    let times: Vec<f64> = (0..n).map(|i| i as f64 * 1e-4).collect();
    let volts: Vec<f64> = (0..n).map(|i| 2.5 + 2.0 * (i as f64 * 0.05).sin() + 1e-3 * ((i * 7919) % 13) as f64).collect();
    let texts: Vec<String> = [(Separator::Comma, DecimalMark::Point), (Separator::Semicolon, DecimalMark::Comma), (Separator::Tab, DecimalMark::Point)]
        .into_iter()
        .map(|(separator, decimal)| {
            write_csv(Times::Samples(&times), &volts, &CsvWriteOptions { separator, decimal, ..CsvWriteOptions::default() })
        })
        .collect();
    const PIECES: [&str; 24] = [
        ",", ";", "\t", "\n", "\r\n", ".", "-", "e", "1", "9", "0", " ", "\"", "\u{2212}", "x", "E", "1e308", "1e400", "1e-400",
        "nan", "inf", "-0", "\u{feff}", "\n\n\n",
    ];
    let options = (
        proptest::option::of(0u8..3),
        proptest::option::of(0u8..2),
        proptest::option::of(0usize..4),
        prop_oneof![0usize..4, Just(usize::MAX)],
        prop_oneof![0usize..4, Just(usize::MAX)],
        proptest::option::of(prop_oneof![Just(1e308), Just(5e-324), Just(0.0), Just(-1.0), Just(1e-3), Just(1e300)]),
        any::<bool>(),
    );
    let edits = proptest::collection::vec((any::<u32>(), 0usize..PIECES.len(), 0u8..3), 0..12);
    let strategy = (0usize..3, edits, options, 0usize..n);
    let clock = Clock::new();
    runner(60_000, 2)
        .run(&strategy, |(which, edits, (sep, dec, header, tcol, vcol, step, strict), keep_rows)| {
            // Keep a prefix of the rows (short files, single rows), then edit characters.
            let full = &texts[which];
            let cut = full.match_indices('\n').nth(keep_rows).map_or(full.len(), |(i, _)| i + 1);
            let mut text = full[..cut].to_string();
            for (pos, piece, kind) in edits {
                let mut at = if text.is_empty() { 0 } else { pos as usize % text.len() };
                while !text.is_char_boundary(at) {
                    at -= 1;
                }
                match kind {
                    0 => text.insert_str(at, PIECES[piece]),
                    1 => {
                        let end = (at + 1..=text.len()).find(|&e| text.is_char_boundary(e)).unwrap_or(text.len());
                        text.replace_range(at..end, PIECES[piece]);
                    }
                    _ => text.truncate(at),
                }
            }
            let options = CsvOptions {
                separator: sep.map(|s| [Separator::Comma, Separator::Semicolon, Separator::Tab][s as usize]),
                decimal: dec.map(|d| [DecimalMark::Point, DecimalMark::Comma][d as usize]),
                header_lines: header,
                time_column: tcol,
                voltage_column: vcol,
                time_step_s: step,
                strict,
                // The header choice follows the kept-row count, so every mode meets every edit.
                header: [HeaderMode::Auto, HeaderMode::Yes, HeaderMode::No][keep_rows % 3],
            };
            let (out, took) = clock.time(|| parse_csv(&text, &options));
            prop_assert!(took < CSV_BOUND, "{took:?}");
            if let Ok(c) = out {
                let lines = text.lines().count().max(1);
                // Memory: one sample per line at most, never above MAX_SAMPLES; skipped rows and
                // the header excerpt bounded by the file's lines and 200 characters.
                prop_assert!(c.volts.len() <= lines && c.volts.len() <= MAX_SAMPLES, "{} samples from {lines} lines", c.volts.len());
                prop_assert!(c.time_s.len() <= c.volts.len().max(1));
                prop_assert!(c.skipped.len() <= lines);
                prop_assert!(c.format.header_text.chars().count() <= 200);
                if let Some(found) = hysteron_core::finite::first_non_finite("capture", &c) {
                    return Err(TestCaseError::fail(format!("{found}; options {options:?}; text {text:?}")));
                }
            }
            Ok(())
        })
        .unwrap();
    clock.report("CSV reader");
}

/// Bound on one record's evaluation (every study the record carries): measured worst 141–192 ms
/// (a demo with tolerance and signal studies; about 170–360 inputs per second); 25-fold margin.
const RECORD_BOUND: Duration = Duration::from_millis(5_000);

#[test]
fn fuzz_record_evaluator() {
    let records = catalog_values();
    let clock = Clock::new();
    let mut studies_failed_non_finite = 0u64;
    let counter = Cell::new(0u64);
    let strategy = (any::<u32>(), proptest::collection::vec((any::<u32>(), any::<u32>()), 1..5));
    runner(7_000, 3)
        .run(&strategy, |(which, picks)| {
            let record = &records[which as usize % records.len()];
            let text = mutate(record, &picks).to_string();
            let (out, took) = clock.time(|| evaluate_json(&text));
            prop_assert!(took < RECORD_BOUND, "{took:?} for {text}");
            let out = out.map_err(|e| TestCaseError::fail(format!("{e}")))?;
            for r in out {
                if let RecordResult::Ok(e) = r {
                    check_finite(&e).map_err(|m| TestCaseError::fail(format!("{m}\nrecord: {text}")))?;
                    if e.errors.iter().any(|x| matches!(x.error, hysteron_core::error::DesignError::NotFinite { .. })) {
                        counter.set(counter.get() + 1);
                    }
                }
            }
            Ok(())
        })
        .unwrap();
    studies_failed_non_finite += counter.get();
    clock.report("record evaluator");
    println!("fuzz record evaluator: {studies_failed_non_finite} inputs had a study refused by the finite guard");
}
