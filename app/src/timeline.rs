//! Where a job's time went, for the timed browser runs: moments on the page's clock (ms since the
//! job started) — each part sent, begun and ended on its worker (the worker's clock moved onto the
//! page's through both clocks' `timeOrigin`), read back, and the merge — written to
//! `<html data-job-timeline>` as `label=ms` pairs when the job finishes (the last job to finish
//! wins). A few numbers per job; nothing on the keystroke path.

/// The moments of one job.
#[derive(Debug, Clone, Default)]
pub struct Timeline {
    start_ms: f64,
    moments: Vec<(String, f64)>,
}

impl Timeline {
    /// A timeline starting at `start_ms` (the page's clock).
    pub fn new(start_ms: f64) -> Self {
        Timeline { start_ms, moments: Vec::new() }
    }

    /// Notes `label` at `at_ms` on the page's clock.
    pub fn note_at(&mut self, label: impl Into<String>, at_ms: f64) {
        self.moments.push((label.into(), at_ms - self.start_ms));
    }

    /// Notes `label` now.
    pub fn note(&mut self, label: impl Into<String>) {
        self.note_at(label, crate::tick::now_ms());
    }

    /// The moments as `label=ms` pairs.
    pub fn text(&self) -> String {
        self.moments.iter().map(|(l, t)| format!("{l}={t:.1}")).collect::<Vec<_>>().join(" ")
    }

    /// Writes the timeline to `<html data-job-timeline>`.
    pub fn publish(&self) {
        if let Some(e) = web_sys::window().and_then(|w| w.document()).and_then(|d| d.document_element()) {
            let _ = e.set_attribute("data-job-timeline", &self.text());
        }
    }
}

/// A moment a worker sent as milliseconds since the epoch (its `timeOrigin + now()`), on the page's clock.
pub fn from_epoch_ms(epoch_ms: f64) -> f64 {
    let origin = web_sys::window().and_then(|w| w.performance()).map(|p| p.time_origin()).unwrap_or(0.0);
    epoch_ms - origin
}
