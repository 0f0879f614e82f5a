//! The part list (BOM) of the open design, with its CSV export.

use super::state::Notebook;
use crate::download::{file_stem, save_text};
use hysteron_core::bom::application::PartKind;
use hysteron_core::bom::{Package, PACKAGE_RATING_BASIS};
use hysteron_core::overview::settled;
use leptos::prelude::*;

const PACKAGES: [Package; 5] = [Package::Chip0402, Package::Chip0603, Package::Chip0805, Package::Chip1206, Package::ThroughHole0W25];

/// The part list section.
#[component]
pub fn PartListSection() -> impl IntoView {
    let nb = expect_context::<Notebook>();
    let list = Memo::new(move |_| {
        nb.with_settled(|r| settled(r).parts.map_err(|e| e.to_string())).unwrap_or_else(|| Err("no design open".into()))
    });
    let package = Memo::new(move |_| nb.with_current(|r| r.parts.package).unwrap_or_default());
    let export = move |_| {
        if let (Some(Ok(b)), Some(name)) = (Some(list.get_untracked()), nb.with_current_untracked(|r| r.name.clone())) {
            let _ = save_text(&format!("{}-parts.csv", file_stem(&name)), "text/csv", &b.to_csv());
        }
    };
    view! {
        <section class="card" aria-labelledby="partlist-heading" id="partlist">
            <h2 id="partlist-heading">"Part list"</h2>
            <div class="row no-print">
                <div class="field">
                    <label for="bom-package">"Resistor package"</label>
                    <select id="bom-package" prop:value=move || package.get().label().to_string()
                        on:change=move |ev| {
                            let v = event_target_value(&ev);
                            if let Some(p) = PACKAGES.iter().copied().find(|p| p.label() == v) { nb.edit(move |r| r.parts.package = p); }
                        }>
                        {PACKAGES.iter().map(|p| view! { <option value=p.label()>{p.label()}</option> }).collect_view()}
                    </select>
                </div>
                <button id="bom-csv" on:click=export>"Save as CSV"</button>
            </div>
            {move || match list.get() {
                Err(e) => view! { <p class="error" id="bom-error">{e}</p> }.into_any(),
                Ok(b) => {
                    // Series, tolerance and package are the same for every resistor: said once above
                    // the table, so the columns left fit beside the design view at 1400 px.
                    let common = format!("Resistors: {} values, {} % tolerance, {} package.", b.settings.series, b.settings.tolerance_pct, b.settings.package.label());
                    view! {
                    <p class="note" id="bom-common">{common}</p>
                    <table class="grid bom" id="bom">
                        <thead><tr><th>"Part"</th><th>"Value"</th><th>"Code"</th><th>"Worst power"</th><th>"Max V"</th><th title=PACKAGE_RATING_BASIS>"Rating*"</th><th>"Min. rating"</th></tr></thead>
                        <tbody>
                            {b.resistors.iter().map(|r| {
                                let notes = r.notes.join("; ");
                                view! {
                                <tr class="bom-line" class:has-notes=!notes.is_empty() data-designator=r.designator.clone() data-value=r.value_ohm.to_string()>
                                    <td>{r.designator.clone()}</td>
                                    <td>{r.value_text.clone()}</td>
                                    <td>{r.value_rkm.clone()}</td>
                                    <td>{r.max_power_w.map(|p| format!("{:.3} mW", p * 1e3)).unwrap_or_default()}</td>
                                    <td>{r.max_volts.map(|v| format!("{v:.2} V")).unwrap_or_default()}</td>
                                    <td class="bom-rating">{format!("{} W", r.package_rating_w)}</td>
                                    <td class="bom-min-rating" title=match r.rating_sufficient { Some(false) => "above the package's rating: use a larger package", _ => "within the package's rating" }>{r.suggested_rating_w.map(|p| format!("{p} W {}", match r.rating_sufficient { Some(false) => "✗", _ => "✓" })).unwrap_or_default()}</td>
                                </tr>
                                {(!notes.is_empty()).then(|| view! { <NoteRow text=notes /> })}
                            }}).collect_view()}
                            {b.application.iter().map(|p| {
                                // The role of an oscillator or debouncer part, then its findings, on a line below.
                                let about = std::iter::once(format!("{} ({} values)", p.label, p.series)).chain(p.notes.iter().cloned()).collect::<Vec<_>>().join("; ");
                                view! {
                                <tr class="bom-app-line has-notes" data-designator=p.designator.clone() data-value=p.value.to_string()>
                                    <td>{p.designator.clone()}</td>
                                    <td>{p.value_text.clone()}</td>
                                    <td>{p.value_rkm.clone().unwrap_or_default()}</td>
                                    <td>{p.max_power_w.map(|w| format!("{:.3} mW", w * 1e3)).unwrap_or_default()}</td>
                                    <td>{format!("{:.2} V", p.max_volts)}</td>
                                    <td class="bom-rating">{(p.kind == PartKind::Resistor).then(|| format!("{} W", b.settings.package.power_rating_w()))}</td>
                                    <td class="bom-min-rating">{p.suggested_rating_w.map(|w| format!("{w} W")).or(p.suggested_voltage_v.map(|v| format!("{v} V"))).unwrap_or_default()}</td>
                                </tr>
                                <NoteRow text=about />
                            }}).collect_view()}
                            {b.regulators.iter().map(|g| {
                                let about = std::iter::once(g.description.clone()).chain(g.notes.iter().cloned()).collect::<Vec<_>>().join("; ");
                                view! {
                                <tr class="bom-regulator has-notes" data-designator=g.designator.clone() data-value=g.voltage_v.to_string()>
                                    <td>{g.designator.clone()}</td>
                                    <td>{format!("{:.3} V", g.voltage_v)}</td>
                                    <td></td>
                                    <td>{format!("{:.3} mW", g.max_power_w * 1e3)}</td>
                                    <td>{format!("{:.2} V", g.voltage_v)}</td>
                                    <td></td>
                                    <td class="bom-min-rating">{g.suggested_rating_w.map(|w| format!("{w} W")).unwrap_or_default()}</td>
                                </tr>
                                <NoteRow text=about />
                            }}).collect_view()}
                            {b.input_network.iter().map(|p| {
                                let about = std::iter::once(format!("input network: {}", p.label)).chain(p.notes.iter().cloned()).collect::<Vec<_>>().join("; ");
                                let min_rating = p.suggested_power_w.map(|w| format!("{w} W")).into_iter()
                                    .chain(p.suggested_voltage_v.map(|v| format!("{v} V"))).collect::<Vec<_>>().join(", ");
                                view! {
                                <tr class="bom-network has-notes" data-designator=p.designator.clone() data-value=p.value.to_string()>
                                    <td>{p.designator.clone()}</td>
                                    <td>{p.value_text.clone()}</td>
                                    <td></td>
                                    <td>{format!("{:.3} mW", p.dissipation_w * 1e3)}</td>
                                    <td>{format!("{:.2} V", p.max_volts)}</td>
                                    <td></td>
                                    <td class="bom-min-rating">{min_rating}</td>
                                </tr>
                                <NoteRow text=about />
                            }}).collect_view()}
                            {
                                let notes = b.device.notes.join("; ");
                                view! {
                                <tr class="bom-device" class:has-notes=!notes.is_empty()>
                                    <td>{b.device.designator.clone()}</td>
                                    <td colspan="6">{b.device.description.clone()}</td>
                                </tr>
                                {(!notes.is_empty()).then(|| view! { <NoteRow text=notes /> })}
                                }
                            }
                        </tbody>
                    </table>
                    <p class="note">{format!("* Rating: {PACKAGE_RATING_BASIS}. Min. rating: {}× the worst dissipation (common practice); for a capacitor, its voltage rating, at least twice the largest voltage it sees.", b.settings.power_derating_factor)}</p>
                    }.into_any()
                }
            }}
        </section>
    }
}

/// A part's role and findings on a full-width line below its figures. The text sits in a block that
/// stays inside the table's visible width while a wide table scrolls sideways (`.note-text`), so on
/// a phone it wraps where it can be read instead of running off the right edge.
#[component]
fn NoteRow(text: String) -> impl IntoView {
    view! { <tr class="bom-notes"><td class="notes" colspan="7"><span class="note-text">{text}</span></td></tr> }
}
