//! Runs a closure on a later turn of the browser's event loop, so long work can be cut into slices
//! that leave the page responsive (input, painting, a cancel button) between them.

use wasm_bindgen::JsCast;

/// Schedules `f` to run as a new task after the current one (and after pending input and paint).
/// A message to a fresh channel is used rather than a zero-delay timer, whose delay browsers clamp
/// to 4 ms once timers nest — that alone would add 100 ms to a 25-slice Monte Carlo run.
pub fn later(f: impl FnOnce() + 'static) {
    let cb = wasm_bindgen::closure::Closure::once_into_js(f);
    match web_sys::MessageChannel::new() {
        Ok(ch) => {
            ch.port1().set_onmessage(Some(cb.unchecked_ref()));
            let _ = ch.port2().post_message(&wasm_bindgen::JsValue::NULL);
        }
        Err(_) => {
            if let Some(w) = web_sys::window() {
                let _ = w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), 0);
            }
        }
    }
}

/// Milliseconds from the page's time origin (performance.now()).
pub fn now_ms() -> f64 {
    web_sys::window().and_then(|w| w.performance()).map(|p| p.now()).unwrap_or(0.0)
}

/// Runs `f` after `ms` milliseconds (a timer).
pub fn after_ms(ms: i32, f: impl FnOnce() + 'static) {
    let cb = wasm_bindgen::closure::Closure::once_into_js(f);
    if let Some(w) = web_sys::window() {
        let _ = w.set_timeout_with_callback_and_timeout_and_arguments_0(cb.unchecked_ref(), ms);
    }
}
