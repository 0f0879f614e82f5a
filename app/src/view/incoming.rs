//! A design shared by link: what the page found in its address (the URL fragment, never sent to a
//! server). Plain state below both the notebook (`state`) and the share section that shows it.

use hysteron_core::record::DesignRecord;
use hysteron_core::share::decode_link;

/// What the page found in its address: a shared design to show read-only, or why it could not open.
#[derive(Clone, Debug)]
pub enum Incoming {
    /// Nothing shared.
    None,
    /// A design to show, not yet kept.
    Design(Box<DesignRecord>),
    /// The link could not be opened.
    Broken(String),
}

/// Reads a shared design from the URL fragment, if any.
pub fn incoming() -> Incoming {
    let hash = web_sys::window().and_then(|w| w.location().hash().ok()).unwrap_or_default();
    let payload = hash.trim_start_matches('#');
    if payload.is_empty() {
        return Incoming::None;
    }
    match decode_link(payload) {
        Ok(r) => Incoming::Design(Box::new(r)),
        Err(e) => Incoming::Broken(format!("This link could not be opened: {e}. Nothing in your notebook was changed.")),
    }
}
