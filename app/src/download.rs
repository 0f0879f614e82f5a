//! Saving text the page produced (CSV, JSON, SVG, netlists) as a file, through a Blob and an
//! object URL — never through markup.

use wasm_bindgen::JsCast;

/// Offers `text` as a download named `file_name` with the given MIME type.
pub fn save_text(file_name: &str, mime: &str, text: &str) -> Result<(), String> {
    let parts = js_sys::Array::new();
    parts.push(&wasm_bindgen::JsValue::from_str(text));
    let opts = web_sys::BlobPropertyBag::new();
    opts.set_type(mime);
    let blob = web_sys::Blob::new_with_str_sequence_and_options(&parts, &opts).map_err(|_| "cannot make the file".to_string())?;
    save_blob(file_name, &blob)
}

/// Offers a Blob as a download.
pub fn save_blob(file_name: &str, blob: &web_sys::Blob) -> Result<(), String> {
    let url = web_sys::Url::create_object_url_with_blob(blob).map_err(|_| "cannot make a link to the file".to_string())?;
    let doc = web_sys::window().and_then(|w| w.document()).ok_or("no document")?;
    let a = doc
        .create_element("a")
        .map_err(|_| "cannot make a link".to_string())?
        .dyn_into::<web_sys::HtmlAnchorElement>()
        .map_err(|_| "cannot make a link".to_string())?;
    a.set_href(&url);
    a.set_download(file_name);
    a.click();
    let _ = web_sys::Url::revoke_object_url(&url);
    Ok(())
}

/// A file name made from a design name: letters, digits and dashes only.
pub fn file_stem(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c.to_ascii_lowercase() } else { '-' })
        .collect();
    let s = s.split('-').filter(|p| !p.is_empty()).collect::<Vec<_>>().join("-");
    if s.is_empty() { "design".into() } else { s }
}
