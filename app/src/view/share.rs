//! The design leaves the browser: a share link (in the URL fragment, never sent to a server), the
//! schematic, and files — the design record (JSON, with import), the SPICE netlist, and the plots.

pub use super::incoming::{incoming, Incoming};
use super::state::Notebook;
use crate::download::{file_stem, save_text};
use crate::plot;
use hysteron_core::record::DesignRecord;
use hysteron_core::schematic::{render_design_svg, SymbolStyle};
use hysteron_core::share::encode_link;
use leptos::prelude::*;
use wasm_bindgen::JsCast;

/// The schematic of a record as a `data:` URL for an `<img>` (an image never runs scripts, and the
/// SVG escapes every text it contains).
pub fn schematic_url(record: &DesignRecord, style: SymbolStyle) -> String {
    let svg = render_design_svg(record, style, true);
    format!("data:image/svg+xml;charset=utf-8,{}", String::from(js_sys::encode_uri_component(&svg)))
}

/// The page's address without its fragment.
fn page_address() -> String {
    web_sys::window()
        .and_then(|w| w.location().href().ok())
        .map(|h| h.split('#').next().unwrap_or("").to_string())
        .unwrap_or_default()
}

/// The symbol style chosen on this page (shared by the schematic and the sheet).
#[derive(Clone, Copy)]
pub struct StyleChoice(pub RwSignal<SymbolStyle>);

/// Share link and files for the open design (the schematic stands with the results).
#[component]
pub fn ShareSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let style = expect_context::<StyleChoice>().0;
    let link = RwSignal::new(String::new());
    let message = RwSignal::new(None::<Result<String, String>>);
    let make_link = move |_| {
        if let Some(payload) = nb.with_current_untracked(encode_link) {
            let url = format!("{}#{}", page_address(), payload);
            link.set(url.clone());
            if let Some(nav) = web_sys::window().map(|w| w.navigator()) {
                let _ = nav.clipboard().write_text(&url);
            }
            message.set(Some(Ok(format!("Link made ({} characters) and copied. It carries the whole design in the part after #, which browsers never send to a server.", url.len()))));
        }
    };
    let stem = move || nb.with_current_untracked(|r| file_stem(&r.name)).unwrap_or_else(|| "design".into());
    let save_json = move |_| {
        if let Some(json) = nb.with_current_untracked(|r| r.to_json()) {
            let _ = save_text(&format!("{}.hysteron.json", stem()), "application/json", &json);
        }
    };
    let save_spice = move |_| {
        match nb.with_current_untracked(hysteron_core::overview::spice) {
            Some(Ok(deck)) => { let _ = save_text(&format!("{}.cir", stem()), "text/plain", &deck); }
            Some(Err(e)) => message.set(Some(Err(format!("no netlist: {e}")))),
            None => {}
        }
    };
    let save_svg = move |_| {
        if let Some(svg) = nb.with_current_untracked(|r| render_design_svg(r, style.get_untracked(), true)) {
            let _ = save_text(&format!("{}-schematic.svg", stem()), "image/svg+xml", &svg);
        }
    };
    let save_curve_svg = move |_| {
        let svg = nb.with_current_untracked(|r| {
            let c = hysteron_core::overview::curve(&r.circuit).map_err(|e| e.to_string())?;
            plot::transfer_svg(&c)
        });
        match svg {
            Some(Ok(s)) => { let _ = save_text(&format!("{}-transfer.svg", stem()), "image/svg+xml", &s); }
            Some(Err(e)) => message.set(Some(Err(e))),
            None => {}
        }
    };
    let save_curve_png = move |_| {
        let canvas = web_sys::window()
            .and_then(|w| w.document())
            .and_then(|d| d.get_element_by_id("transfer-plot"))
            .and_then(|e| e.dyn_into::<web_sys::HtmlCanvasElement>().ok());
        if let Some(url) = canvas.and_then(|c| c.to_data_url_with_type("image/png").ok()) {
            if let Some(a) = web_sys::window().and_then(|w| w.document()).and_then(|d| d.create_element("a").ok()).and_then(|a| a.dyn_into::<web_sys::HtmlAnchorElement>().ok()) {
                a.set_href(&url);
                a.set_download(&format!("{}-transfer.png", stem()));
                a.click();
            }
        }
    };
    let import_error = RwSignal::new(None::<String>);
    let on_import = move |ev: leptos::ev::Event| {
        let Some(input) = ev.target().and_then(|t| t.dyn_into::<web_sys::HtmlInputElement>().ok()) else { return };
        let Some(file) = input.files().and_then(|f| f.get(0)) else { return };
        let Ok(reader) = web_sys::FileReader::new() else { return };
        let r2 = reader.clone();
        let onload = wasm_bindgen::closure::Closure::once_into_js(move || {
            let text = r2.result().ok().and_then(|v| v.as_string()).unwrap_or_default();
            match DesignRecord::from_json(&text) {
                Ok(record) => {
                    import_error.set(None);
                    nb.add_unique(record);
                }
                Err(e) => import_error.set(Some(format!("That file is not a design Hysteron can open: {e}"))),
            }
        });
        reader.set_onload(Some(onload.unchecked_ref()));
        let _ = reader.read_as_text(&file);
        input.set_value("");
    };
    view! {
        <section class="card" aria-labelledby="share-heading" id="share">
            <h2 id="share-heading">"Link and files"</h2>
            <div class="row no-print">
                <button id="make-link" on:click=make_link>"Make a share link"</button>
                <button id="print-sheet" class="quiet" on:click=move |_| { if let Some(w) = web_sys::window() { let _ = w.print(); } }>"Print the design sheet"</button>
            </div>
            {move || (!link.get().is_empty()).then(|| view! {
                <div class="field"><label for="share-link">"Link to this design"</label>
                <input id="share-link" type="text" readonly prop:value=move || link.get() /></div>
            })}
            {move || message.get().map(|m| match m {
                Ok(t) => view! { <p class="note" id="share-message">{t}</p> }.into_any(),
                Err(e) => view! { <p class="error" id="share-error">{e}</p> }.into_any(),
            })}
            <div class="row no-print">
                <button class="quiet" id="save-json" on:click=save_json>"Design (JSON)"</button>
                <button class="quiet" id="save-spice" on:click=save_spice>"SPICE netlist"</button>
                <button class="quiet" id="save-schematic" on:click=save_svg>"Schematic (SVG)"</button>
                <button class="quiet" id="save-curve-svg" on:click=save_curve_svg>"Transfer curve (SVG)"</button>
                <button class="quiet" id="save-curve-png" on:click=save_curve_png>"Transfer curve (PNG)"</button>
                <div class="field">
                    <label for="import-json">"Open a design file (JSON)"</label>
                    <input id="import-json" type="file" accept=".json,application/json" on:change=on_import />
                </div>
            </div>
            {move || import_error.get().map(|e| view! { <p class="error" id="import-error" role="alert">{e}</p> })}
        </section>
    }
}

fn clear_fragment() {
    if let Some(w) = web_sys::window() {
        if let Ok(h) = w.history() {
            let _ = h.replace_state_with_url(&wasm_bindgen::JsValue::NULL, "", Some(&page_address()));
        }
    }
}

/// A shared design shown read-only, with the action to keep a copy.
#[component]
pub fn SharedDesign(incoming: RwSignal<Incoming>) -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let style = expect_context::<StyleChoice>().0;
    move || match incoming.get() {
        Incoming::None => ().into_any(),
        Incoming::Broken(msg) => view! {
            <div class="banner" role="alert" id="link-error">{msg}
                <button class="quiet small" on:click=move |_| { clear_fragment(); incoming.set(Incoming::None); }>"Dismiss"</button></div>
        }.into_any(),
        Incoming::Design(record) => {
            let hysteron_core::overview::Settled { thresholds: t, parts, cautions } = hysteron_core::overview::settled(&record);
            let keep_record = (*record).clone();
            let img = schematic_url(&record, style.get_untracked());
            view! {
                <section class="card shared" id="shared-design" aria-labelledby="shared-heading">
                    <h2 id="shared-heading">"Shared design (read-only): " {record.name.clone()}</h2>
                    <p class="note">{record.purpose.clone()}</p>
                    {(!cautions.is_empty()).then(|| view! {
                        <div class="caution" role="note"><strong>"Safety"</strong>
                            <ul>{cautions.into_iter().map(|c| view! { <li>{c.message}</li> }).collect_view()}</ul>
                            <p>"Local codes and licensed practice take precedence."</p></div>
                    })}
                    <p>{match t {
                        Ok(t) => view! { "VT+ " <output id="shared-vt-upper" data-value=t.vt_upper_v.to_string()>{format!("{:.4} V", t.vt_upper_v)}</output>
                                         ", VT− " <output id="shared-vt-lower" data-value=t.vt_lower_v.to_string()>{format!("{:.4} V", t.vt_lower_v)}</output> }.into_any(),
                        Err(e) => view! { <span class="error">{e.to_string()}</span> }.into_any(),
                    }}</p>
                    <img class="schematic" src=img alt="Schematic of the shared design" />
                    {parts.ok().map(|b| view! { <p class="note">{b.resistors.iter().map(|r| format!("{} {}", r.designator, r.value_text)).collect::<Vec<_>>().join(" · ")}</p> })}
                    <p class="note">"This design is not in your notebook yet: nothing is saved until you keep it. Printing now prints this design."</p>
                    <div class="row">
                        <button id="keep-shared" on:click=move |_| { nb.add_unique(keep_record.clone()); clear_fragment(); incoming.set(Incoming::None); }>"Keep in notebook"</button>
                        <button id="print-shared" class="quiet" on:click=move |_| { if let Some(w) = web_sys::window() { let _ = w.print(); } }>"Print the design sheet"</button>
                        <button id="close-shared" class="quiet" on:click=move |_| { clear_fragment(); incoming.set(Incoming::None); }>"Close without keeping"</button>
                    </div>
                </section>
            }.into_any()
        }
    }
}
