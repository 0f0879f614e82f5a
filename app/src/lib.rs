//! The Hysteron notebook page.
