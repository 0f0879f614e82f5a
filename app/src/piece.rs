//! Pieces of the page fetched after the first paint (DEVELOPERS.md, "Loading in pieces").

/// A piece of the page's code could not be fetched: no network and no kept copy, or the page was
/// rebuilt since it opened and the old pieces are gone. Split functions are declared `fallible`
/// with this error, so a failed fetch is reported where the piece belongs instead of a panic,
/// which would stop the whole page.
#[derive(Debug, Clone, Copy)]
pub struct PieceMissing;

impl From<leptos::wasm_split::SplitLoaderError> for PieceMissing {
    fn from(_: leptos::wasm_split::SplitLoaderError) -> Self {
        PieceMissing
    }
}

/// Set once a piece could not be fetched: the page then says so once, at its top (`view::Root`),
/// and what stood in for the piece points there (`glance`, `view::Deferred`).
#[derive(Clone, Copy)]
pub struct PieceTrouble(pub leptos::prelude::RwSignal<bool>);
