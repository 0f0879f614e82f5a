//! Drawing a schematic sheet ([`SchematicLayout`]) as a standalone SVG document, in either symbol
//! convention. It reads only the sheet data; values are written through [`crate::notation`].
//!
//! Symbol conventions ([`SymbolStyle`]), from memory of the standards' figures:
//! - IEC 60617 (parts 4, 12 and 13): resistor as a rectangle; a logic element as a rectangle with
//!   its qualifying symbol ("1" for a buffer, the hysteresis sign for a Schmitt input) and a small
//!   circle for a negated output; values written as IEC 60062 RKM codes (4K7, 100K, 2M2);
//! - IEEE 315 (with IEEE 91 distinctive-shape gates): resistor as a zig-zag; buffers and inverters
//!   as triangles with a bubble on a negated output; values in engineering notation (4.7 kΩ).
//!
//! Both draw the comparator as a triangle with (+) and (−) inputs, an open-collector output with
//! the "open circuit output" diamond, the ground as three shortening bars, a supply rail as a bar
//! with its name and voltage, and an NPN transistor as a circle with base bar and an emitter arrow.
//!
//! All text (designators, values, net labels, the title) is XML-escaped, so a design name can
//! never inject markup into the page.

use super::sheet::{Direction, LabelKind, NetLabel, PartSymbol, PlacedPart, SchematicLayout};
use crate::notation::{self, Unit};
use serde::{Deserialize, Serialize};
use std::fmt::Write as _;

/// Which symbol convention to draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SymbolStyle {
    /// IEC 60617: rectangular resistors, rectangular logic elements, RKM values.
    #[default]
    Iec60617,
    /// IEEE 315: zig-zag resistors, distinctive-shape gates, engineering-notation values.
    Ieee315,
}

/// Pixels per grid unit in the SVG.
pub const GRID_PX: f64 = 12.0;

/// Escapes text for XML character data and attribute values (XML 1.0 §2.4: `&` and `<` must be
/// escaped; `>`, `"` and `'` are escaped too so the same text is safe in attributes).
/// Control characters other than tab, newline and carriage return are not allowed in XML 1.0
/// (§2.2) and are dropped.
pub fn xml_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c if (c as u32) < 0x20 && c != '\t' && c != '\n' && c != '\r' => {}
            '\u{FFFE}' | '\u{FFFF}' => {}
            c => out.push(c),
        }
    }
    out
}

/// Significant digits of a resistance written on the drawing.
pub const VALUE_DIGITS: u8 = 4;

/// A resistance as an IEC 60062 RKM code with up to [`VALUE_DIGITS`] significant digits, in the
/// schematic form that keeps one digit after a lone multiplier letter (4K7, 100K, R47, 1K0, 2M2;
/// [`notation::format_rkm_padded`]); "?" for a value no RKM code can hold.
pub fn rkm(ohms: f64) -> String {
    notation::format_rkm_padded(ohms, VALUE_DIGITS).unwrap_or_else(|_| "?".into())
}

/// A resistance in engineering notation with its unit and up to [`VALUE_DIGITS`] significant
/// digits: "4.7 kΩ", "100 kΩ", "470 Ω", "2.2 MΩ" ([`notation::format_with_unit`]).
pub fn engineering_ohms(ohms: f64) -> String {
    notation::format_with_unit(ohms, VALUE_DIGITS, Unit::Ohm)
}

fn px(v: f64) -> String {
    let s = format!("{:.1}", v * GRID_PX);
    s.strip_suffix(".0").map(str::to_string).unwrap_or(s)
}

/// Renders any layout as a standalone SVG document.
pub fn render_layout_svg(layout: &SchematicLayout, style: SymbolStyle, title: Option<&str>) -> String {
    let top = if title.is_some() { 2.0 } else { 0.0 };
    let (w, h) = (layout.width as f64, layout.height as f64 + top);
    let mut o = String::new();
    let _ = write!(
        o,
        r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {} {}" width="{}" height="{}" font-family="sans-serif" font-size="11" role="img">"#,
        px(w),
        px(h),
        px(w),
        px(h)
    );
    let desc = match style {
        SymbolStyle::Iec60617 => "Schematic, IEC 60617 symbols",
        SymbolStyle::Ieee315 => "Schematic, IEEE 315 symbols",
    };
    let _ = write!(
        o,
        "<title>{}</title>",
        xml_escape(&match title {
            Some(t) => format!("{t} — {desc}"),
            None => desc.to_string(),
        })
    );
    o.push_str(r##"<rect width="100%" height="100%" fill="#fff"/>"##);
    if let Some(t) = title {
        let _ = write!(
            o,
            r#"<text x="{}" y="{}" font-size="13" font-weight="bold">{}</text>"#,
            px(1.0),
            px(1.3),
            xml_escape(t)
        );
    }
    let _ = write!(
        o,
        r##"<g transform="translate(0 {})" stroke="#000" stroke-width="1.4" fill="none" stroke-linecap="round">"##,
        px(top)
    );
    for wire in &layout.wires {
        let _ = write!(
            o,
            r#"<line x1="{}" y1="{}" x2="{}" y2="{}"/>"#,
            px(wire.from.x as f64),
            px(wire.from.y as f64),
            px(wire.to.x as f64),
            px(wire.to.y as f64)
        );
    }
    for j in &layout.junctions {
        let _ = write!(o, r##"<circle cx="{}" cy="{}" r="2.6" fill="#000"/>"##, px(j.x as f64), px(j.y as f64));
    }
    for part in &layout.parts {
        draw_part(&mut o, part, style);
    }
    for label in &layout.labels {
        draw_label(&mut o, label);
    }
    o.push_str("</g></svg>");
    o
}

fn text(o: &mut String, x: f64, y: f64, anchor: &str, content: &str) {
    let _ = write!(
        o,
        r##"<text x="{}" y="{}" text-anchor="{anchor}" fill="#000" stroke="none">{}</text>"##,
        px(x),
        px(y),
        xml_escape(content)
    );
}

fn polyline(o: &mut String, points: &[(f64, f64)], extra: &str) {
    let pts: Vec<String> = points.iter().map(|(x, y)| format!("{},{}", px(*x), px(*y))).collect();
    let _ = write!(o, r#"<polyline points="{}"{extra}/>"#, pts.join(" "));
}

fn draw_part(o: &mut String, part: &PlacedPart, style: SymbolStyle) {
    let (x, y) = (part.at.x as f64, part.at.y as f64);
    match part.symbol {
        PartSymbol::Resistor { resistance_ohm, in_part_list } => {
            let value = match style {
                SymbolStyle::Iec60617 => rkm(resistance_ohm),
                SymbolStyle::Ieee315 => engineering_ohms(resistance_ohm),
            };
            let horizontal = part.direction == Direction::Right;
            // Local frame: along = 0..4, across = 0.
            let at =
                |along: f64, across: f64| if horizontal { (x + along, y + across) } else { (x + across, y + along) };
            let dash = if in_part_list { "" } else { r#" stroke-dasharray="3 2""# };
            polyline(o, &[at(0.0, 0.0), at(0.8, 0.0)], "");
            polyline(o, &[at(3.2, 0.0), at(4.0, 0.0)], "");
            match style {
                SymbolStyle::Iec60617 => {
                    let (a, b) = (at(0.8, -0.4), at(3.2, 0.4));
                    let _ = write!(
                        o,
                        r#"<rect x="{}" y="{}" width="{}" height="{}"{dash}/>"#,
                        px(a.0.min(b.0)),
                        px(a.1.min(b.1)),
                        px((a.0 - b.0).abs()),
                        px((a.1 - b.1).abs())
                    );
                }
                SymbolStyle::Ieee315 => {
                    let mut pts = vec![at(0.8, 0.0)];
                    for k in 0..6 {
                        let along = 0.8 + 0.2 + 0.4 * k as f64;
                        pts.push(at(along, if k % 2 == 0 { -0.45 } else { 0.45 }));
                    }
                    pts.push(at(3.2, 0.0));
                    polyline(o, &pts, dash);
                }
            }
            match part.text_side {
                Direction::Up | Direction::Down if horizontal => {
                    text(o, x + 2.0, y - 0.8, "middle", &part.designator);
                    text(o, x + 2.0, y + 1.5, "middle", &value);
                }
                Direction::Left => {
                    text(o, x - 0.8, y + 1.8, "end", &part.designator);
                    text(o, x - 0.8, y + 2.9, "end", &value);
                }
                _ => {
                    text(o, x + 0.8, y + 1.8, "start", &part.designator);
                    text(o, x + 0.8, y + 2.9, "start", &value);
                }
            }
        }
        PartSymbol::Comparator { open_drain } => {
            polyline(o, &[(x + 1.0, y + 1.0), (x + 1.0, y + 7.0), (x + 7.0, y + 4.0), (x + 1.0, y + 1.0)], "");
            polyline(o, &[(x, y + 2.0), (x + 1.0, y + 2.0)], "");
            polyline(o, &[(x, y + 6.0), (x + 1.0, y + 6.0)], "");
            polyline(o, &[(x + 7.0, y + 4.0), (x + 8.0, y + 4.0)], "");
            polyline(o, &[(x + 4.0, y), (x + 4.0, y + 2.5)], "");
            polyline(o, &[(x + 4.0, y + 8.0), (x + 4.0, y + 5.5)], "");
            text(o, x + 1.7, y + 2.4, "middle", "+");
            text(o, x + 1.7, y + 6.4, "middle", "−");
            if open_drain {
                // Open-circuit (open-collector/open-drain) output mark: a diamond with a bar below.
                let (cx, cy) = (x + 4.4, y + 4.0);
                polyline(o, &[(cx, cy - 0.5), (cx + 0.5, cy), (cx, cy + 0.5), (cx - 0.5, cy), (cx, cy - 0.5)], "");
                polyline(o, &[(cx - 0.5, cy + 0.8), (cx + 0.5, cy + 0.8)], "");
            }
            text(o, x + 5.4, y + 1.2, "start", &part.designator);
        }
        PartSymbol::LogicGate { schmitt, inverting } => {
            polyline(o, &[(x, y + 4.0), (x + 1.0, y + 4.0)], "");
            polyline(o, &[(x + 4.0, y), (x + 4.0, y + 1.0)], "");
            polyline(o, &[(x + 4.0, y + 8.0), (x + 4.0, y + 7.0)], "");
            let (out_start, mark_x) = match style {
                SymbolStyle::Iec60617 => {
                    let _ = write!(
                        o,
                        r#"<rect x="{}" y="{}" width="{}" height="{}"/>"#,
                        px(x + 1.0),
                        px(y + 1.0),
                        px(6.0),
                        px(6.0)
                    );
                    text(o, x + 4.0, y + 2.4, "middle", "1");
                    (x + 7.0, x + 4.0)
                }
                SymbolStyle::Ieee315 => {
                    polyline(o, &[(x + 1.0, y + 1.0), (x + 1.0, y + 7.0), (x + 7.0, y + 4.0), (x + 1.0, y + 1.0)], "");
                    polyline(o, &[(x + 4.0, y + 1.0), (x + 4.0, y + 2.5)], "");
                    polyline(o, &[(x + 4.0, y + 7.0), (x + 4.0, y + 5.5)], "");
                    (x + 7.0, x + 3.0)
                }
            };
            if schmitt {
                // Hysteresis sign: two offset steps forming a loop.
                let (cx, cy) = (mark_x, y + 4.3);
                polyline(o, &[(cx - 1.5, cy + 0.6), (cx + 0.5, cy + 0.6), (cx + 0.5, cy - 0.6)], "");
                polyline(o, &[(cx - 0.5, cy + 0.6), (cx - 0.5, cy - 0.6), (cx + 1.5, cy - 0.6)], "");
            }
            if inverting {
                let _ = write!(o, r#"<circle cx="{}" cy="{}" r="{}"/>"#, px(out_start + 0.4), px(y + 4.0), px(0.4));
                polyline(o, &[(out_start + 0.8, y + 4.0), (x + 8.0, y + 4.0)], "");
            } else {
                polyline(o, &[(out_start, y + 4.0), (x + 8.0, y + 4.0)], "");
            }
            text(o, x + 5.4, y + 0.4, "start", &part.designator);
        }
        PartSymbol::Npn => {
            let _ = write!(o, r#"<circle cx="{}" cy="{}" r="{}"/>"#, px(x + 3.0), px(y + 3.0), px(2.2));
            polyline(o, &[(x, y + 3.0), (x + 2.0, y + 3.0)], "");
            let _ = write!(
                o,
                r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke-width="2.4"/>"#,
                px(x + 2.0),
                px(y + 1.8),
                px(x + 2.0),
                px(y + 4.2)
            );
            polyline(o, &[(x + 2.0, y + 2.4), (x + 4.0, y + 1.2), (x + 4.0, y)], "");
            polyline(o, &[(x + 2.0, y + 3.6), (x + 4.0, y + 4.8), (x + 4.0, y + 6.0)], "");
            // Emitter arrow pointing away from the base.
            polyline(o, &[(x + 3.1, y + 4.75), (x + 3.7, y + 4.6), (x + 3.5, y + 4.05)], r##" fill="#000""##);
            text(o, x + 5.6, y + 3.4, "start", &part.designator);
        }
        PartSymbol::Zener { voltage_v } => {
            draw_breakdown_diode(o, x, y, style);
            text(o, x - 1.0, y + 1.8, "end", &part.designator);
            text(o, x - 1.0, y + 2.9, "end", &voltage_value(voltage_v, style));
        }
        PartSymbol::ShuntReference { voltage_v } => {
            draw_breakdown_diode(o, x, y, style);
            // The reference pin enters the triangle from the side.
            polyline(o, &[(x + 0.35, y + 2.0), (x + 2.0, y + 2.0)], "");
            text(o, x - 1.0, y + 1.8, "end", &part.designator);
            text(o, x - 1.0, y + 2.9, "end", &voltage_value(voltage_v, style));
        }
        PartSymbol::Capacitor { capacitance_f } => draw_capacitor(o, part, capacitance_f, style),
        PartSymbol::Diode { forward_v } => {
            draw_diode(o, x, y);
            side_text(o, part, &diode_value(forward_v));
        }
        PartSymbol::Tvs { standoff_v } => {
            draw_tvs(o, x, y, style);
            side_text(o, part, &tvs_value(standoff_v));
        }
    }
}

/// A clamp diode's value as the part list writes it: its forward drop ("Vf 300 mV").
pub fn diode_value(forward_v: f64) -> String {
    format!("Vf {}", notation::format_with_unit(forward_v, 3, Unit::Volt))
}

/// A TVS diode's value as the part list writes it: its standoff voltage ("standoff 33 V").
pub fn tvs_value(standoff_v: f64) -> String {
    format!("standoff {}", notation::format_with_unit(standoff_v, 3, Unit::Volt))
}

/// Where the designator and value of a vertical diode-like part go: beside its body, on its
/// `text_side` (left: right-aligned; otherwise left-aligned).
fn side_text_at(part: &PlacedPart) -> (f64, f64, &'static str) {
    let (x, y) = (part.at.x as f64, part.at.y as f64);
    match part.text_side {
        Direction::Left => (x - 1.1, y + 1.8, "end"),
        _ => (x + 1.1, y + 1.8, "start"),
    }
}

fn side_text(o: &mut String, part: &PlacedPart, value: &str) {
    let (tx, ty, anchor) = side_text_at(part);
    text(o, tx, ty, anchor, &part.designator);
    text(o, tx, ty + 1.1, anchor, value);
}

/// A diode drawn downward from its cathode at (x, y) to its anode at (x, y + 4): the triangle
/// points up at the cathode bar (IEC 60617-5 and IEEE 315 draw it alike; from memory).
fn draw_diode(o: &mut String, x: f64, y: f64) {
    polyline(o, &[(x, y), (x, y + 1.4)], "");
    polyline(o, &[(x, y + 2.6), (x, y + 4.0)], "");
    polyline(o, &[(x - 0.7, y + 2.6), (x + 0.7, y + 2.6), (x, y + 1.4), (x - 0.7, y + 2.6)], "");
    polyline(o, &[(x - 0.7, y + 1.4), (x + 0.7, y + 1.4)], "");
}

/// A bidirectional breakdown (TVS) diode from (x, y) to (x, y + 4): two triangles pointing at
/// one breakdown bar, bent at one end (IEC 60617) or at both (IEEE 315), as the zener's bar.
fn draw_tvs(o: &mut String, x: f64, y: f64, style: SymbolStyle) {
    polyline(o, &[(x, y), (x, y + 0.9)], "");
    polyline(o, &[(x, y + 3.1), (x, y + 4.0)], "");
    polyline(o, &[(x - 0.7, y + 0.9), (x + 0.7, y + 0.9), (x, y + 2.0), (x - 0.7, y + 0.9)], "");
    polyline(o, &[(x - 0.7, y + 3.1), (x + 0.7, y + 3.1), (x, y + 2.0), (x - 0.7, y + 3.1)], "");
    match style {
        SymbolStyle::Iec60617 => polyline(o, &[(x - 0.7, y + 2.0), (x + 0.7, y + 2.0), (x + 0.7, y + 2.4)], ""),
        SymbolStyle::Ieee315 => {
            polyline(o, &[(x - 0.9, y + 1.6), (x - 0.7, y + 2.0), (x + 0.7, y + 2.0), (x + 0.9, y + 2.4)], "")
        }
    }
}

/// A rectangle on the sheet, grid units (x0 ≤ x1, y0 ≤ y1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extent {
    /// Left edge.
    pub x0: f64,
    /// Top edge.
    pub y0: f64,
    /// Right edge.
    pub x1: f64,
    /// Bottom edge.
    pub y1: f64,
}

impl Extent {
    /// Whether two rectangles share area (touching edges do not count).
    pub fn overlaps(&self, other: &Extent) -> bool {
        self.x0 < other.x1 && other.x0 < self.x1 && self.y0 < other.y1 && other.y0 < self.y1
    }
}

/// The estimated width of a text line at the drawing's 11 px sans-serif, grid units: about
/// 0.6 em per character, half that for a space (an upper estimate for digits and capitals).
pub fn text_width(content: &str) -> f64 {
    content.chars().map(|c| if c == ' ' { 0.3 } else { 0.6 }).sum()
}

/// The box of a text line drawn at baseline (x, y) with its anchor, grid units.
fn text_extent(x: f64, y: f64, anchor: &str, content: &str) -> Extent {
    let w = text_width(content);
    let x0 = match anchor {
        "middle" => x - w / 2.0,
        "end" => x - w,
        _ => x,
    };
    Extent { x0, y0: y - 0.8, x1: x0 + w, y1: y + 0.2 }
}

/// The boxes a part covers on the sheet, grid units: its body (between its pins, leads
/// included) and each text line written beside it (designator, value), as [`render_layout_svg`]
/// draws them. Two parts whose boxes overlap would be drawn over each other.
pub fn part_extents(part: &PlacedPart, style: SymbolStyle) -> Vec<Extent> {
    let (x, y) = (part.at.x as f64, part.at.y as f64);
    let horizontal = part.direction == Direction::Right;
    let two_pin = |across: f64| {
        if horizontal {
            Extent { x0: x, y0: y - across, x1: x + 4.0, y1: y + across }
        } else {
            Extent { x0: x - across, y0: y, x1: x + across, y1: y + 4.0 }
        }
    };
    let texts = |out: &mut Vec<Extent>, lines: &[(f64, f64, &str, &str)]| {
        for &(tx, ty, anchor, content) in lines {
            out.push(text_extent(tx, ty, anchor, content));
        }
    };
    let d = part.designator.as_str();
    let mut out = Vec::new();
    match part.symbol {
        PartSymbol::Resistor { resistance_ohm, .. } => {
            let value = match style {
                SymbolStyle::Iec60617 => rkm(resistance_ohm),
                SymbolStyle::Ieee315 => engineering_ohms(resistance_ohm),
            };
            out.push(two_pin(0.45));
            match part.text_side {
                Direction::Up | Direction::Down if horizontal => {
                    texts(&mut out, &[(x + 2.0, y - 0.8, "middle", d), (x + 2.0, y + 1.5, "middle", &value)])
                }
                Direction::Left => texts(&mut out, &[(x - 0.8, y + 1.8, "end", d), (x - 0.8, y + 2.9, "end", &value)]),
                _ => texts(&mut out, &[(x + 0.8, y + 1.8, "start", d), (x + 0.8, y + 2.9, "start", &value)]),
            }
        }
        PartSymbol::Capacitor { capacitance_f } => {
            let value = notation::format_with_unit(capacitance_f, 3, Unit::Farad);
            out.push(two_pin(0.9));
            match part.text_side {
                Direction::Up | Direction::Down if horizontal => {
                    texts(&mut out, &[(x + 2.0, y - 1.3, "middle", d), (x + 2.0, y + 2.0, "middle", &value)])
                }
                Direction::Left => texts(&mut out, &[(x - 1.2, y + 1.8, "end", d), (x - 1.2, y + 2.9, "end", &value)]),
                _ => texts(&mut out, &[(x + 1.2, y + 1.8, "start", d), (x + 1.2, y + 2.9, "start", &value)]),
            }
        }
        PartSymbol::Diode { forward_v } => {
            out.push(two_pin(0.7));
            let (tx, ty, anchor) = side_text_at(part);
            texts(&mut out, &[(tx, ty, anchor, d), (tx, ty + 1.1, anchor, &diode_value(forward_v))]);
        }
        PartSymbol::Tvs { standoff_v } => {
            out.push(two_pin(0.9));
            let (tx, ty, anchor) = side_text_at(part);
            texts(&mut out, &[(tx, ty, anchor, d), (tx, ty + 1.1, anchor, &tvs_value(standoff_v))]);
        }
        PartSymbol::Zener { voltage_v } | PartSymbol::ShuntReference { voltage_v } => {
            let right = if matches!(part.symbol, PartSymbol::ShuntReference { .. }) { 2.0 } else { 0.9 };
            out.push(Extent { x0: x - 0.9, y0: y, x1: x + right, y1: y + 4.0 });
            let value = voltage_value(voltage_v, style);
            texts(&mut out, &[(x - 1.0, y + 1.8, "end", d), (x - 1.0, y + 2.9, "end", &value)]);
        }
        PartSymbol::Comparator { .. } => {
            out.push(Extent { x0: x, y0: y, x1: x + 8.0, y1: y + 8.0 });
            texts(&mut out, &[(x + 5.4, y + 1.2, "start", d)]);
        }
        PartSymbol::LogicGate { .. } => {
            out.push(Extent { x0: x, y0: y, x1: x + 8.0, y1: y + 8.0 });
            texts(&mut out, &[(x + 5.4, y + 0.4, "start", d)]);
        }
        PartSymbol::Npn => {
            out.push(Extent { x0: x, y0: y, x1: x + 5.2, y1: y + 6.0 });
            texts(&mut out, &[(x + 5.6, y + 3.4, "start", d)]);
        }
    }
    out
}

/// A capacitor between its two pins, four units apart: IEC 60617-4 draws two parallel plates;
/// IEEE 315 one straight and one curved plate (from memory of the standards' figures). The value
/// is written in engineering notation with its unit (100 nF) in both conventions.
fn draw_capacitor(o: &mut String, part: &PlacedPart, capacitance_f: f64, style: SymbolStyle) {
    let (x, y) = (part.at.x as f64, part.at.y as f64);
    let horizontal = part.direction == Direction::Right;
    // Local frame: along = 0..4 from the first pin, across = perpendicular.
    let at = |along: f64, across: f64| if horizontal { (x + along, y + across) } else { (x + across, y + along) };
    let (gap_a, gap_b) = (1.75, 2.25);
    polyline(o, &[at(0.0, 0.0), at(gap_a, 0.0)], "");
    polyline(o, &[at(gap_b, 0.0), at(4.0, 0.0)], "");
    polyline(o, &[at(gap_a, -0.9), at(gap_a, 0.9)], r#" stroke-width="2""#);
    match style {
        SymbolStyle::Iec60617 => polyline(o, &[at(gap_b, -0.9), at(gap_b, 0.9)], r#" stroke-width="2""#),
        SymbolStyle::Ieee315 => {
            // The curved plate bows away from the straight one.
            let (a, c, b) = (at(gap_b + 0.35, -0.9), at(gap_b - 0.15, 0.0), at(gap_b + 0.35, 0.9));
            let _ = write!(
                o,
                r#"<path d="M{} {} Q{} {} {} {}" stroke-width="2"/>"#,
                px(a.0),
                px(a.1),
                px(2.0 * c.0 - 0.5 * (a.0 + b.0)),
                px(2.0 * c.1 - 0.5 * (a.1 + b.1)),
                px(b.0),
                px(b.1)
            );
        }
    }
    let value = notation::format_with_unit(capacitance_f, 3, Unit::Farad);
    match part.text_side {
        Direction::Up | Direction::Down if horizontal => {
            text(o, x + 2.0, y - 1.3, "middle", &part.designator);
            text(o, x + 2.0, y + 2.0, "middle", &value);
        }
        Direction::Left => {
            text(o, x - 1.2, y + 1.8, "end", &part.designator);
            text(o, x - 1.2, y + 2.9, "end", &value);
        }
        _ => {
            text(o, x + 1.2, y + 1.8, "start", &part.designator);
            text(o, x + 1.2, y + 2.9, "start", &value);
        }
    }
}

/// A voltage on the drawing: IEC style writes the unit letter in place of the decimal point
/// ("5V1", "12V", as zener markings do; common practice), IEEE style in engineering notation.
pub fn voltage_value(v: f64, style: SymbolStyle) -> String {
    match style {
        SymbolStyle::Iec60617 => {
            let t = notation::format_significant(v, 3);
            match t.split_once('.') {
                Some((a, b)) => format!("{a}V{b}"),
                None => format!("{t}V"),
            }
        }
        SymbolStyle::Ieee315 => notation::format_with_unit(v, 3, Unit::Volt),
    }
}

/// A diode body drawn downward from (x, y): leads, the triangle pointing up at the cathode bar,
/// and the breakdown bar of the style (IEC 60617: one bent end; IEEE 315: both ends bent, a "Z").
fn draw_breakdown_diode(o: &mut String, x: f64, y: f64, style: SymbolStyle) {
    polyline(o, &[(x, y), (x, y + 1.4)], "");
    polyline(o, &[(x, y + 2.6), (x, y + 4.0)], "");
    polyline(o, &[(x - 0.7, y + 2.6), (x + 0.7, y + 2.6), (x, y + 1.4), (x - 0.7, y + 2.6)], "");
    match style {
        SymbolStyle::Iec60617 => polyline(o, &[(x - 0.7, y + 1.4), (x + 0.7, y + 1.4), (x + 0.7, y + 1.8)], ""),
        SymbolStyle::Ieee315 => {
            polyline(o, &[(x - 0.9, y + 1.0), (x - 0.7, y + 1.4), (x + 0.7, y + 1.4), (x + 0.9, y + 1.8)], "")
        }
    }
}

fn draw_label(o: &mut String, label: &NetLabel) {
    let (x, y) = (label.at.x as f64, label.at.y as f64);
    match label.kind {
        LabelKind::Ground => {
            polyline(o, &[(x, y), (x, y + 0.6)], "");
            polyline(o, &[(x - 0.9, y + 0.6), (x + 0.9, y + 0.6)], "");
            polyline(o, &[(x - 0.55, y + 1.0), (x + 0.55, y + 1.0)], "");
            polyline(o, &[(x - 0.2, y + 1.4), (x + 0.2, y + 1.4)], "");
        }
        LabelKind::Rail => match label.toward {
            Direction::Up => {
                polyline(o, &[(x - 1.0, y), (x + 1.0, y)], r#" stroke-width="2""#);
                text(o, x, y - 0.6, "middle", &label.text);
            }
            Direction::Down => {
                polyline(o, &[(x - 1.0, y), (x + 1.0, y)], r#" stroke-width="2""#);
                text(o, x, y + 1.5, "middle", &label.text);
            }
            Direction::Left => {
                polyline(o, &[(x, y - 1.0), (x, y + 1.0)], r#" stroke-width="2""#);
                text(o, x - 0.5, y + 0.35, "end", &label.text);
            }
            Direction::Right => {
                polyline(o, &[(x, y - 1.0), (x, y + 1.0)], r#" stroke-width="2""#);
                text(o, x + 0.5, y + 0.35, "start", &label.text);
            }
        },
        LabelKind::Input | LabelKind::Output | LabelKind::Reference => {
            // A flag pointing away from the wire, with the name beyond it.
            let w = 1.2;
            let (pts, tx, ty, anchor) = match label.toward {
                Direction::Left => (
                    vec![
                        (x, y),
                        (x - 0.5, y - 0.6),
                        (x - w - 0.5, y - 0.6),
                        (x - w - 0.5, y + 0.6),
                        (x - 0.5, y + 0.6),
                        (x, y),
                    ],
                    x - w - 0.9,
                    y + 0.35,
                    "end",
                ),
                Direction::Right => (
                    vec![
                        (x, y),
                        (x + 0.5, y - 0.6),
                        (x + w + 0.5, y - 0.6),
                        (x + w + 0.5, y + 0.6),
                        (x + 0.5, y + 0.6),
                        (x, y),
                    ],
                    x + w + 0.9,
                    y + 0.35,
                    "start",
                ),
                Direction::Up => (
                    vec![
                        (x, y),
                        (x - 0.6, y - 0.5),
                        (x - 0.6, y - 1.5),
                        (x + 0.6, y - 1.5),
                        (x + 0.6, y - 0.5),
                        (x, y),
                    ],
                    x,
                    y - 1.9,
                    "middle",
                ),
                Direction::Down => (
                    vec![
                        (x, y),
                        (x - 0.6, y + 0.5),
                        (x - 0.6, y + 1.5),
                        (x + 0.6, y + 1.5),
                        (x + 0.6, y + 0.5),
                        (x, y),
                    ],
                    x,
                    y + 2.6,
                    "middle",
                ),
            };
            let fill = match label.kind {
                LabelKind::Input => r##" fill="#e8f0ff""##,
                LabelKind::Output => r##" fill="#e8ffe8""##,
                _ => r##" fill="#fff4e0""##,
            };
            polyline(o, &pts, fill);
            text(o, tx, ty, anchor, &label.text);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rkm_codes_follow_iec_60062() {
        // Examples of IEC 60062 (from memory; DOMAIN §3): 4K7, R47, 2M2, 100R, 4K99, 1K0.
        assert_eq!(rkm(4700.0), "4K7");
        assert_eq!(rkm(0.47), "R47");
        assert_eq!(rkm(2.2e6), "2M2");
        assert_eq!(rkm(100.0), "100R");
        assert_eq!(rkm(4990.0), "4K99");
        assert_eq!(rkm(1000.0), "1K0");
        assert_eq!(rkm(100e3), "100K");
        assert_eq!(rkm(10e6), "10M");
        assert_eq!(rkm(999_960.0), "1M0");
        assert_eq!(rkm(1.0), "1R");
        assert_eq!(rkm(0.0), "0R");
        assert_eq!(rkm(-1.0), "?");
        assert_eq!(engineering_ohms(4700.0), "4.7 kΩ");
        assert_eq!(engineering_ohms(470.0), "470 Ω");
    }

    #[test]
    fn escaping_covers_markup_characters() {
        assert_eq!(xml_escape("<a & 'b'> \"c\"\u{1}"), "&lt;a &amp; &apos;b&apos;&gt; &quot;c&quot;");
    }
}
