//! A panic hook that shows a readable message on the page instead of leaving it dead.

use wasm_bindgen::JsCast;

/// Installs the hook: logs to the console and writes a banner into the page.
pub fn install() {
    std::panic::set_hook(Box::new(|info| {
        console_error_panic_hook::hook(info);
        show_banner(&format!(
            "Hysteron stopped because of an internal error: {info}. Your saved designs are safe in this browser's storage; reload the page to continue."
        ));
    }));
}

/// Writes a fixed banner at the top of the page (as text, never as markup).
pub fn show_banner(message: &str) {
    let Some(doc) = web_sys::window().and_then(|w| w.document()) else { return };
    let Some(body) = doc.body() else { return };
    if let Ok(el) = doc.create_element("div") {
        el.set_id("fatal-banner");
        el.set_attribute("role", "alert").ok();
        el.set_text_content(Some(message));
        if let Some(first) = body.first_child() {
            body.insert_before(&el, Some(&first)).ok();
        } else {
            body.append_child(&el).ok();
        }
        if let Ok(h) = el.dyn_into::<web_sys::HtmlElement>() {
            h.set_class_name("fatal-banner");
        }
    }
}
