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

/// Runs `f` once the page has painted: after the next animation frame, on a task of its own (or
/// after `fallback_ms`, where frames do not run, as in a hidden tab — whichever comes first runs
/// `f`, once). Reading layout there (a scroll position, a size) costs no forced layout.
pub fn after_paint(fallback_ms: i32, f: impl FnOnce() + 'static) {
    let once = std::rc::Rc::new(std::cell::Cell::new(Some(Box::new(f) as Box<dyn FnOnce()>)));
    let run = {
        let once = once.clone();
        move || {
            if let Some(f) = once.take() {
                f()
            }
        }
    };
    let run2 = run.clone();
    let frame = wasm_bindgen::closure::Closure::once_into_js(move || later(run));
    if let Some(w) = web_sys::window() {
        let _ = w.request_animation_frame(frame.unchecked_ref());
    }
    after_ms(fallback_ms, run2);
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
