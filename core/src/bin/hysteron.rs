//! `hysteron`: evaluates design records headlessly.
//!
//! Usage: `hysteron [FILE]` reads one design record or a JSON array of records from FILE (or from
//! standard input when FILE is absent or `-`) and writes one JSON result per record to standard output.
//! Exit status: 0 when every record was evaluated, 1 when any record or study failed (its error is in
//! the output), 2 when the input cannot be read at all (message on standard error).

use hysteron_core::evaluate::{evaluate_json, RecordResult};
use std::io::Read;
use std::process::ExitCode;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.iter().any(|a| a == "-h" || a == "--help") {
        println!("usage: hysteron [FILE|-]\nreads design records (one JSON object or an array) and writes results as JSON");
        return ExitCode::SUCCESS;
    }
    if args.len() > 1 {
        eprintln!("hysteron: expected at most one file argument, got {}", args.len());
        return ExitCode::from(2);
    }
    let text = match args.first().map(String::as_str) {
        None | Some("-") => {
            let mut s = String::new();
            if let Err(e) = std::io::stdin().read_to_string(&mut s) {
                eprintln!("hysteron: cannot read standard input: {e}");
                return ExitCode::from(2);
            }
            s
        }
        Some(path) => match std::fs::read_to_string(path) {
            Ok(s) => s,
            Err(e) => {
                eprintln!("hysteron: cannot read {path}: {e}");
                return ExitCode::from(2);
            }
        },
    };
    let results = match evaluate_json(&text) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("hysteron: {e}");
            return ExitCode::from(2);
        }
    };
    let any_failed = results.iter().any(|r| match r {
        RecordResult::Ok(e) => !e.errors.is_empty(),
        RecordResult::Error { .. } => true,
    });
    match serde_json::to_string_pretty(&results) {
        Ok(s) => println!("{s}"),
        Err(e) => {
            eprintln!("hysteron: cannot write results: {e}");
            return ExitCode::from(2);
        }
    }
    if any_failed { ExitCode::from(1) } else { ExitCode::SUCCESS }
}
