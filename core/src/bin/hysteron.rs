//! `hysteron`: evaluates design records headlessly.
//!
//! Usage: `hysteron [FILE]` reads one design record or a JSON array of records from FILE (or from
//! standard input when FILE is absent or `-`) and writes one JSON result per record to standard output,
//! as one pretty-printed JSON array.
//!
//! An array is streamed: each element is read, evaluated and its result written (and flushed) before
//! the next element is read, so memory stays bounded by the largest single record and result, however
//! long the array (see [`hysteron_core::stream`]).
//!
//! Exit status: 0 when every record was evaluated, 1 when any record or study failed (its error is in
//! the output), 2 when the input cannot be read at all (message on standard error). Because results
//! are written as they are computed, input that stops being JSON part-way through an array (truncated,
//! or text after the records) also exits 2, after the results of the records before it: the output
//! array is then left unclosed, so it does not parse as complete JSON.
//!
//! When standard output is closed early (e.g. `hysteron big.json | head`), hysteron stops reading and
//! evaluating at once and exits quietly with status 0, without a message: the reader chose to stop,
//! which is not an error of the design or of the input (as `yes | head` or `seq 1e9 | head` do not
//! complain).

use hysteron_core::evaluate::RecordResult;
use hysteron_core::stream::{evaluate_stream, StreamError};
use std::io::{BufReader, BufWriter, ErrorKind, Read, Write};
use std::process::ExitCode;

/// Writes the results as the same pretty JSON array `serde_json::to_string_pretty` gives for the
/// whole list, one element at a time.
struct ArrayWriter<W: Write> {
    out: W,
    written: usize,
}

impl<W: Write> ArrayWriter<W> {
    fn element(&mut self, result: &RecordResult) -> std::io::Result<()> {
        let text = serde_json::to_vec_pretty(result).map_err(std::io::Error::other)?;
        self.out.write_all(if self.written == 0 { b"[\n  " } else { b",\n  " })?;
        // Indent the element one level: JSON text has raw newlines only between tokens (never
        // inside strings, where they are escaped), so every line break is followed by two spaces.
        for (i, line) in text.split(|&b| b == b'\n').enumerate() {
            if i > 0 {
                self.out.write_all(b"\n  ")?;
            }
            self.out.write_all(line)?;
        }
        self.written += 1;
        self.out.flush()
    }

    fn finish(&mut self) -> std::io::Result<()> {
        self.out.write_all(if self.written == 0 { b"[]\n" } else { b"\n]\n" })?;
        self.out.flush()
    }
}

/// Writes a line to standard error; a closed standard error is ignored (there is nowhere to say so).
fn complain(msg: &str) {
    let _ = writeln!(std::io::stderr(), "hysteron: {msg}");
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.iter().any(|a| a == "-h" || a == "--help") {
        let _ = writeln!(
            std::io::stdout(),
            "usage: hysteron [FILE|-]\nreads design records (one JSON object or an array) and writes results as JSON"
        );
        return ExitCode::SUCCESS;
    }
    if args.len() > 1 {
        complain(&format!("expected at most one file argument, got {}", args.len()));
        return ExitCode::from(2);
    }
    let (input, source): (Box<dyn Read>, String) = match args.first().map(String::as_str) {
        None | Some("-") => (Box::new(std::io::stdin().lock()), "standard input".into()),
        Some(path) => match std::fs::File::open(path) {
            Ok(f) => (Box::new(f), path.to_string()),
            Err(e) => {
                complain(&format!("cannot read {path}: {e}"));
                return ExitCode::from(2);
            }
        },
    };
    let mut de = serde_json::Deserializer::from_reader(BufReader::with_capacity(1 << 16, input));
    let mut writer = ArrayWriter { out: BufWriter::with_capacity(1 << 16, std::io::stdout().lock()), written: 0 };
    let outcome = evaluate_stream(&mut de, |result| writer.element(&result));
    let write_error = |e: std::io::Error| {
        if e.kind() == ErrorKind::BrokenPipe {
            ExitCode::SUCCESS
        } else {
            complain(&format!("cannot write results: {e}"));
            ExitCode::from(2)
        }
    };
    match outcome {
        Ok(summary) => match writer.finish() {
            Ok(()) if summary.failed > 0 => ExitCode::from(1),
            Ok(()) => ExitCode::SUCCESS,
            Err(e) => write_error(e),
        },
        Err(StreamError::Sink(e)) => write_error(e),
        Err(StreamError::Read(e)) => {
            complain(&format!("cannot read {source}: {e}"));
            ExitCode::from(2)
        }
        Err(StreamError::Input(e)) => {
            // Whatever was written stays; the array is left unclosed so it cannot pass as complete.
            let _ = writer.out.flush();
            complain(&e.to_string());
            ExitCode::from(2)
        }
    }
}
