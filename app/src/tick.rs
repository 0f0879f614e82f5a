//! Runs a closure on a later turn of the browser's event loop, so long work can be cut into slices
//! that leave the page responsive (input, painting, a cancel button) between them.

use wasm_bindgen::JsCast;

/// Schedules `f` to run after the current event has been handled (a zero-delay timer).
pub fn later(f: impl FnOnce() + 'static) {
    let cb = wasm_bindgen::closure::Closure::once_into_js(f);
    if let Some(w) = web_sys::window() {
        let _ = w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), 0);
    }
}

/// Milliseconds from the page's time origin (performance.now()).
pub fn now_ms() -> f64 {
    web_sys::window().and_then(|w| w.performance()).map(|p| p.now()).unwrap_or(0.0)
}
