//! The Hysteron notebook page: renders designs and stores them. All circuit math lives in
//! `hysteron-core`; this crate only turns user input into design records, asks `core` for results,
//! draws them and keeps them in local storage.
#![deny(missing_docs)]

pub mod download;
pub mod fields;
pub mod glance;
pub mod panic;
pub mod piece;
pub mod jobs;
pub mod plot;
pub mod storage;
pub mod tick;
pub mod timeline;
pub mod transfer;
pub mod unread;
pub mod view;


/// Installs the readable panic banner and mounts the page into `<body>`.
pub fn start() {
    // With "hysteron-mounted" below, splits loading into fetching and compiling the module
    // (navigation to this mark) and building the page (this mark to the next).
    if let Some(p) = web_sys::window().and_then(|w| w.performance()) {
        let _ = p.mark("hysteron-start");
    }
    panic::install();
    leptos::mount::mount_to_body(view::Root);
    // Lets browser timing runs read how long loading took (performance.getEntriesByName); the
    // editor marks "hysteron-editable" when it has arrived.
    if let Some(p) = web_sys::window().and_then(|w| w.performance()) {
        let _ = p.mark("hysteron-mounted");
    }
}
