//! A worker's result arrays copied into the page's memory a slice per task, so that a large result
//! never holds the page's thread in one long task.
//!
//! Measured (headless Chromium on the 2-core test machine, CPU profile of the page's thread): the
//! five 400,000-point waveforms of a 10 M-sample signal study (16 MB) took 47 ms to copy in one
//! task, about 340 MB/s — the first touch of freshly grown WebAssembly memory, not the copy itself.
//! In slices of [`SLICE_ELEMENTS`] each task copies for a few milliseconds.

use js_sys::Float64Array;

/// Elements copied per task (2 MiB of `f64`). A result this small or smaller (a Monte Carlo part of
/// 100,000 trials is 200,000 values) is copied at once, without waiting for another task.
pub const SLICE_ELEMENTS: usize = 1 << 18;

/// Copies `arrays` into vectors, [`SLICE_ELEMENTS`] values per task, then calls `done` with them
/// (in the same task when all fit in one slice).
pub fn copy_in_slices(arrays: Vec<Float64Array>, done: impl FnOnce(Vec<Vec<f64>>) + 'static) {
    run_sliced(Copying::new(arrays), Box::new(done));
}

/// A copy made a slice at a time.
trait Sliced: 'static {
    /// What the finished copy gives.
    type Out;
    /// Copies the next slice; whether the copy is now complete.
    fn step(&mut self) -> bool;
    /// The finished copy.
    fn into_out(self) -> Self::Out;
}

/// Runs the first slice in the calling task and each further one on a later task of its own,
/// then hands the result to `done`: in the calling task when one slice was all, else on a task of
/// its own after the last slice, so that what `done` does with a large result (reading it,
/// drawing it) never adds to a slice's task.
fn run_sliced<S: Sliced>(mut copy: S, done: Box<dyn FnOnce(S::Out)>) {
    if copy.step() {
        done(copy.into_out());
    } else {
        crate::tick::later(move || run_further_slices(copy, done));
    }
}

/// The second and later slices of [`run_sliced`], each on a task of its own, and `done` on the
/// task after the last.
fn run_further_slices<S: Sliced>(mut copy: S, done: Box<dyn FnOnce(S::Out)>) {
    if copy.step() {
        crate::tick::later(move || done(copy.into_out()));
    } else {
        crate::tick::later(move || run_further_slices(copy, done));
    }
}

/// Where a copy stands: `out[i]` holds the first `out[i].len()` values of `arrays[i]`.
struct Copying {
    arrays: Vec<Float64Array>,
    lengths: Vec<usize>,
    out: Vec<Vec<f64>>,
}

impl Copying {
    fn new(arrays: Vec<Float64Array>) -> Self {
        let lengths: Vec<usize> = arrays.iter().map(|a| a.length() as usize).collect();
        let out = lengths.iter().map(|&n| Vec::with_capacity(n)).collect();
        Copying { arrays, lengths, out }
    }
}

impl Sliced for Copying {
    type Out = Vec<Vec<f64>>;

    /// Copies at most [`SLICE_ELEMENTS`] more values; whether every array is now complete.
    fn step(&mut self) -> bool {
        let mut budget = SLICE_ELEMENTS;
        for ((array, &len), v) in self.arrays.iter().zip(&self.lengths).zip(&mut self.out) {
            let start = v.len();
            let take = (len - start).min(budget);
            if take > 0 {
                v.resize(start + take, 0.0);
                // Indices fit in u32: a typed array's length is a u32.
                array.subarray(start as u32, (start + take) as u32).copy_to(&mut v[start..]);
                budget -= take;
            }
            if v.len() < len {
                return false;
            }
        }
        true
    }

    fn into_out(self) -> Self::Out {
        self.out
    }
}

/// UTF-16 code units of a string converted per task (4 MiB of text at most).
pub const TEXT_SLICE_UNITS: u32 = 1 << 21;

/// Converts the browser's string `text` into a Rust `String`, [`TEXT_SLICE_UNITS`] code units per
/// task, then calls `done` with it. A slice never ends between the two halves of a surrogate pair,
/// so characters outside the Basic Multilingual Plane arrive whole.
pub fn text_in_slices(text: &js_sys::JsString, done: impl FnOnce(String) + 'static) {
    let copy = TextCopy { text: text.clone(), at: 0, out: String::with_capacity(text.length() as usize) };
    run_sliced(copy, Box::new(done));
}

struct TextCopy {
    text: js_sys::JsString,
    at: u32,
    out: String,
}

impl Sliced for TextCopy {
    type Out = String;

    /// Converts the next slice; whether the whole text is now converted.
    fn step(&mut self) -> bool {
        let len = self.text.length();
        let mut end = self.at.saturating_add(TEXT_SLICE_UNITS).min(len);
        if end < len && (f64::from(0xD800u16)..f64::from(0xDC00u16)).contains(&self.text.char_code_at(end - 1)) {
            // High surrogates are U+D800–U+DBFF (the Unicode Standard, §3.9, UTF-16): keep one with its low half.
            end -= 1;
        }
        if let Some(part) = self.text.slice(self.at, end).as_string() {
            self.out.push_str(&part);
        }
        self.at = end;
        self.at >= len
    }

    fn into_out(self) -> Self::Out {
        self.out
    }
}
