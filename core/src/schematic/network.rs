//! The input network drawn in front of the trigger (issue 14): a row above the trigger's own
//! drawing that reads from the field terminal to the trigger's input, with the designators and
//! values of the part list ([`crate::input_network::parts::network_parts`]).
//!
//! ```text
//!                        VCC 5 V
//!                          D3
//! FIELD ─ R7 ─┬─ R9 ─┬──┬──┤─── R10 ──┬── IN
//!             R8     D4    …          C2
//!            0 V    0 V              0 V
//! ```
//! In order: the dropper's top resistor from the field terminal and its bottom resistor to 0 V,
//! the series resistor, the clamp (a diode to each rail, or a TVS to 0 V), the filter's resistor
//! and its capacitor to 0 V. The row ends in an "IN" flag, the same net as the trigger's input
//! flag below it: a sheet joins a row to the next by a named net. The row stays within the
//! trigger's width so the drawing keeps its scale in a narrow column; the positions follow the
//! written texts ([`super::svg::part_extents`]) so that no text runs into the next part.

use super::sheet::{gp, Direction, GridPoint, LabelKind, NetLabel, PartSymbol, PlacedPart, PlacedPin, SchematicLayout, Wire};
use super::svg::{part_extents, SymbolStyle};
use crate::bom::{NetworkPart, NetworkPartKind};
use crate::input_network::{Clamp, InputNetwork};
use crate::netlist::{Netlist, SourceRole, GROUND, INPUT_NET, SUPPLY_NET};

/// The net of the field terminal.
pub const FIELD_NET: &str = "field";
/// The text of the field terminal's flag.
pub const FIELD_LABEL: &str = "FIELD";
/// The row of the network's wire, grid units from the top of the sheet.
const ROW: i32 = 6;
/// The lowest grid row the network's drawing reaches (ground symbols and texts below its row).
const BOTTOM: f64 = ROW as f64 + 5.6;

/// The rails the clamp diodes return to, as the trigger's netlist names them.
#[derive(Debug, Clone, PartialEq)]
pub struct ClampRails {
    /// The supply's net and its label ("vcc", "VCC 5 V").
    pub upper: (String, String),
    /// The negative rail's net and its label; 0 V is ground.
    pub lower: (String, String),
}

impl ClampRails {
    /// The supply and the negative rail of a trigger's netlist.
    pub fn of(net: &Netlist) -> Self {
        let find = |role: SourceRole| net.sources.iter().find(|s| s.role == role).map(|s| (s.node_plus.clone(), s.label.clone()));
        ClampRails {
            upper: find(SourceRole::Supply).unwrap_or_else(|| (SUPPLY_NET.into(), "VCC".into())),
            lower: find(SourceRole::NegativeRail).unwrap_or_else(|| (GROUND.into(), "0 V".into())),
        }
    }
}

/// One part of the network in drawing order, with its part-list line.
enum Stage<'a> {
    /// A resistor in the signal path (dropper top, series, filter).
    Along(&'a NetworkPart),
    /// A part from the signal path down to 0 V (dropper bottom, TVS, filter capacitor).
    ToGround(&'a NetworkPart),
    /// The clamp diodes: to the supply (up) and to the negative rail (down), at one node.
    Diodes(&'a NetworkPart, &'a NetworkPart),
}

/// Pairs the network's parts with their place in the drawing, in the order
/// [`crate::input_network::parts::network_parts`] lists them (resistors: dropper top and bottom,
/// series, filter; then the clamp; then the filter capacitor). `None` when the lines do not fit
/// the network (a part list made for another network).
fn stages<'a>(net: &InputNetwork, parts: &'a [NetworkPart]) -> Option<Vec<Stage<'a>>> {
    let mut resistors = parts.iter().filter(|p| p.kind == NetworkPartKind::Resistor);
    let mut next_r = || resistors.next();
    let mut out = Vec::new();
    if net.dropper.is_some() {
        let (top, bottom) = (next_r()?, next_r()?);
        out.push(Stage::Along(top));
        out.push(Stage::ToGround(bottom));
    }
    if net.series_ohm.is_some() {
        out.push(Stage::Along(next_r()?));
    }
    let filter_r = if net.filter.is_some() { Some(next_r()?) } else { None };
    let diodes: Vec<&NetworkPart> = parts.iter().filter(|p| p.kind == NetworkPartKind::Diode).collect();
    let tvs = parts.iter().find(|p| p.kind == NetworkPartKind::Tvs);
    match net.clamp {
        Clamp::None => {}
        Clamp::RailDiodes { .. } => match diodes.as_slice() {
            [up, down] => out.push(Stage::Diodes(up, down)),
            _ => return None,
        },
        Clamp::Tvs { .. } => out.push(Stage::ToGround(tvs?)),
    }
    if let Some(r) = filter_r {
        out.push(Stage::Along(r));
        let c = parts.iter().find(|p| p.kind == NetworkPartKind::Capacitor)?;
        out.push(Stage::ToGround(c));
    }
    Some(out)
}

fn pin(name: &str, at: GridPoint, net: &str) -> PlacedPin {
    PlacedPin { name: name.into(), at, net: net.into() }
}

fn symbol(p: &NetworkPart) -> PartSymbol {
    match p.kind {
        NetworkPartKind::Resistor => PartSymbol::Resistor { resistance_ohm: p.value, in_part_list: true },
        NetworkPartKind::Capacitor => PartSymbol::Capacitor { capacitance_f: p.value },
        NetworkPartKind::Diode => PartSymbol::Diode { forward_v: p.value },
        NetworkPartKind::Tvs => PartSymbol::Tvs { standoff_v: p.value },
    }
}

/// The rightmost edge of a part's drawing (body and texts) in either symbol style, grid units.
fn right_edge(part: &PlacedPart) -> f64 {
    [SymbolStyle::Iec60617, SymbolStyle::Ieee315]
        .into_iter()
        .flat_map(|s| part_extents(part, s))
        .map(|e| e.x1)
        .fold(f64::NEG_INFINITY, f64::max)
}

/// Half the width of a horizontal part's texts (centred over and under it) in either style.
fn half_text(part: &PlacedPart) -> f64 {
    let x = part.at.x as f64;
    [SymbolStyle::Iec60617, SymbolStyle::Ieee315]
        .into_iter()
        .flat_map(|s| part_extents(part, s))
        .map(|e| (x + 2.0 - e.x0).max(e.x1 - x - 2.0))
        .fold(2.0, f64::max)
}

/// Draws the network alone: a sheet whose row starts with the field terminal and ends with the
/// "IN" flag. `None` when the part lines do not fit the network.
pub fn network_layout(net: &InputNetwork, parts: &[NetworkPart], rails: &ClampRails) -> Option<SchematicLayout> {
    let stages = stages(net, parts)?;
    let mut s = SchematicLayout::default();
    let y = ROW;
    // The field terminal; `x` is the current node, `free` the first column no text has taken.
    let mut x = 5;
    let mut free = x as f64 + 0.5;
    let mut node = FIELD_NET.to_string();
    // Whether the current node has its downward (and upward) slot taken.
    let mut down_used = true;
    let mut up_used = true;
    s.labels.push(NetLabel { text: FIELD_LABEL.into(), at: gp(x, y), kind: LabelKind::Input, toward: Direction::Left, net: FIELD_NET.into() });
    let mut along_seen = 0;
    // Moves to a new node at column `to` or beyond, wiring it from the current one.
    let mut junctions: Vec<GridPoint> = Vec::new();
    let mut wires: Vec<Wire> = Vec::new();
    let place_node = |x: &mut i32, to: i32, wires: &mut Vec<Wire>| {
        if to > *x {
            wires.push(Wire { from: gp(*x, y), to: gp(to, y) });
            *x = to;
        }
    };
    for st in &stages {
        match st {
            Stage::Along(p) => {
                along_seen += 1;
                let next = format!("network_{along_seen}");
                // Texts centred over the part must clear what stands to the left.
                let mut part = PlacedPart {
                    designator: p.designator.clone(),
                    symbol: symbol(p),
                    at: gp(x + 1, y),
                    direction: Direction::Right,
                    text_side: Direction::Up,
                    pins: vec![],
                };
                let half = half_text(&part);
                let start = (x + 1).max((free + 0.5 + half - 2.0).ceil() as i32);
                place_node(&mut x, start, &mut wires);
                part.at = gp(start, y);
                part.pins = vec![pin("1", gp(start, y), &node), pin("2", gp(start + 4, y), &next)];
                free = right_edge(&part);
                s.parts.push(part);
                x = start + 4;
                node = next;
                down_used = false;
                up_used = false;
            }
            Stage::ToGround(p) => {
                if down_used {
                    let to = (x + 2).max((free + 1.0).ceil() as i32);
                    place_node(&mut x, to, &mut wires);
                    up_used = false;
                } else {
                    let to = (x + 1).max((free + 1.0).ceil() as i32);
                    place_node(&mut x, to, &mut wires);
                }
                let part = PlacedPart {
                    designator: p.designator.clone(),
                    symbol: symbol(p),
                    at: gp(x, y),
                    direction: Direction::Down,
                    text_side: Direction::Right,
                    pins: vec![pin("1", gp(x, y), &node), pin("2", gp(x, y + 4), GROUND)],
                };
                s.labels.push(NetLabel { text: "0 V".into(), at: gp(x, y + 4), kind: LabelKind::Ground, toward: Direction::Down, net: GROUND.into() });
                junctions.push(gp(x, y));
                free = right_edge(&part);
                s.parts.push(part);
                down_used = true;
            }
            Stage::Diodes(up, down) => {
                let to = (x + 1).max((free + 1.0).ceil() as i32);
                if down_used || up_used {
                    let to = (x + 2).max(to);
                    place_node(&mut x, to, &mut wires);
                } else {
                    place_node(&mut x, to, &mut wires);
                }
                // Upper diode: anode at the node, cathode at the supply; drawn from its cathode.
                let upper = PlacedPart {
                    designator: up.designator.clone(),
                    symbol: symbol(up),
                    at: gp(x, y - 4),
                    direction: Direction::Down,
                    text_side: Direction::Right,
                    pins: vec![pin("k", gp(x, y - 4), &rails.upper.0), pin("a", gp(x, y), &node)],
                };
                s.labels.push(NetLabel { text: rails.upper.1.clone(), at: gp(x, y - 4), kind: LabelKind::Rail, toward: Direction::Up, net: rails.upper.0.clone() });
                // Lower diode: cathode at the node, anode at the negative rail.
                let lower = PlacedPart {
                    designator: down.designator.clone(),
                    symbol: symbol(down),
                    at: gp(x, y),
                    direction: Direction::Down,
                    text_side: Direction::Right,
                    pins: vec![pin("k", gp(x, y), &node), pin("a", gp(x, y + 4), &rails.lower.0)],
                };
                let (kind, text) = if rails.lower.0 == GROUND { (LabelKind::Ground, "0 V".to_string()) } else { (LabelKind::Rail, rails.lower.1.clone()) };
                s.labels.push(NetLabel { text, at: gp(x, y + 4), kind, toward: Direction::Down, net: rails.lower.0.clone() });
                junctions.push(gp(x, y));
                free = right_edge(&upper).max(right_edge(&lower));
                s.parts.push(upper);
                s.parts.push(lower);
                down_used = true;
                up_used = true;
            }
        }
    }
    // The last node is the trigger's input: rename it and end the row in the "IN" flag.
    for p in &mut s.parts {
        for q in &mut p.pins {
            if q.net == node {
                q.net = INPUT_NET.into();
            }
        }
    }
    let end = (x + 2).max((free + 1.0).ceil() as i32);
    place_node(&mut x, end, &mut wires);
    s.labels.push(NetLabel { text: "IN".into(), at: gp(x, y), kind: LabelKind::Input, toward: Direction::Right, net: INPUT_NET.into() });
    // A node joins three wires (a junction dot) only where the row runs on past a part to 0 V
    // or the rails; the last node's part ends the row at a corner-free tee as well.
    s.junctions = junctions.into_iter().filter(|j| wires.iter().any(|w| w.from == *j)).collect();
    s.wires = wires;
    s.width = x + 5;
    s.height = BOTTOM.ceil() as i32;
    Some(s)
}

/// Adds the network above the trigger's drawing: the trigger moves down below the network's row
/// and the sheet widens when the row needs more room. Returns whether the network was drawn
/// (`false` when the part lines do not fit the network).
pub fn add_network(layout: &mut SchematicLayout, net: &InputNetwork, parts: &[NetworkPart], rails: &ClampRails) -> bool {
    let Some(row) = network_layout(net, parts, rails) else {
        return false;
    };
    // The trigger's highest drawn point: wires, pins, labels (a rail's name above its bar) and texts.
    let mut top = f64::INFINITY;
    for w in &layout.wires {
        top = top.min(w.from.y.min(w.to.y) as f64);
    }
    for l in &layout.labels {
        top = top.min(l.at.y as f64 - if l.toward == Direction::Up { 2.0 } else { 0.5 });
    }
    for p in &layout.parts {
        for e in [SymbolStyle::Iec60617, SymbolStyle::Ieee315].into_iter().flat_map(|s| part_extents(p, s)) {
            top = top.min(e.y0);
        }
    }
    if !top.is_finite() {
        top = 0.0;
    }
    let dy = (BOTTOM + 1.0 - top).ceil() as i32;
    let shift = |p: &mut GridPoint| p.y += dy;
    for w in &mut layout.wires {
        shift(&mut w.from);
        shift(&mut w.to);
    }
    for j in &mut layout.junctions {
        shift(j);
    }
    for l in &mut layout.labels {
        shift(&mut l.at);
    }
    for p in &mut layout.parts {
        shift(&mut p.at);
        for q in &mut p.pins {
            shift(&mut q.at);
        }
    }
    layout.height += dy;
    layout.width = layout.width.max(row.width);
    layout.parts.splice(0..0, row.parts);
    layout.wires.splice(0..0, row.wires);
    layout.junctions.splice(0..0, row.junctions);
    layout.labels.splice(0..0, row.labels);
    true
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input_network::{Dropper, RcFilter};
    use crate::netlist::Netlisted;
    use crate::record::DesignRecord;
    use crate::schematic::svg::{engineering_ohms, rkm, xml_escape};
    use crate::schematic::{design_layout, render_design_svg};

    fn sawmill() -> DesignRecord {
        crate::catalog::demos().into_iter().find(|s| s.key == "sawmill-end-stop").unwrap().record()
    }

    /// The sawmill demo as it is, and its network in other shapes (a TVS, filter only, dropper
    /// only, series resistor and clamps without a dropper) on several of the trigger topologies.
    fn cases() -> Vec<(String, DesignRecord)> {
        let base = sawmill();
        let net = base.input_network.clone().unwrap();
        let tvs = Clamp::Tvs { standoff_v: 33.0, breakdown_v: 36.7, clamping_v: 53.3, peak_current_a: 11.3 };
        let shapes = [
            ("as-is", net.clone()),
            ("tvs", InputNetwork { clamp: tvs, ..net.clone() }),
            ("filter-only", InputNetwork { dropper: None, series_ohm: None, clamp: Clamp::None, ..net.clone() }),
            ("dropper-only", InputNetwork { series_ohm: None, clamp: Clamp::None, filter: None, ..net.clone() }),
            (
                "series-clamp",
                InputNetwork { dropper: None, filter: None, field_max_v: Some(12.0), surge_v: Some(60.0), ..net.clone() },
            ),
            (
                "dropper-tvs-filter",
                InputNetwork {
                    dropper: Some(Dropper { top_ohm: 100e3, bottom_ohm: 22e3 }),
                    series_ohm: None,
                    clamp: tvs,
                    filter: Some(RcFilter { r_ohm: 4.7e3, c_f: 22e-9 }),
                    ..net.clone()
                },
            ),
        ];
        let mut out: Vec<(String, DesignRecord)> = shapes
            .iter()
            .map(|(k, n)| (format!("sawmill-{k}"), DesignRecord { input_network: Some(n.clone()), ..base.clone() }))
            .collect();
        // The as-is network on other topologies (a negative rail among them: the lower clamp
        // returns to VEE) and on the demos with an oscillator or debouncer.
        for (key, circuit) in crate::schematic::tests::variants() {
            if ["inv-split", "bjt", "gate-net", "cmos", "mon-self", "plain-inv"].contains(&key.as_str()) {
                let mut r = DesignRecord { circuit, input_network: Some(net.clone()), output_dynamics: None, ..base.clone() };
                r.checks = crate::analysis::CheckSettings::default();
                out.push((key, r));
            }
        }
        for key in ["beehive-clock", "rain-gauge"] {
            let mut r = crate::catalog::demos().into_iter().find(|s| s.key == key).unwrap().record();
            r.input_network = Some(net.clone());
            out.push((key.into(), r));
        }
        out
    }

    fn network_parts_of(r: &DesignRecord) -> Vec<NetworkPart> {
        let a = crate::topology::analyse(&r.circuit, &r.checks).unwrap();
        crate::overview::part_list(r, &a).unwrap().input_network
    }

    #[test]
    fn every_network_part_is_drawn_once_with_the_part_lists_designator_and_value() {
        for (key, r) in cases() {
            let parts = network_parts_of(&r);
            assert!(!parts.is_empty(), "{key}: the network has parts");
            let layout = design_layout(&r);
            for p in &parts {
                let drawn: Vec<&PlacedPart> = layout.parts.iter().filter(|q| q.designator == p.designator).collect();
                assert_eq!(drawn.len(), 1, "{key}: {} drawn {} times", p.designator, drawn.len());
                assert_eq!(drawn[0].symbol, symbol(p), "{key}: {}", p.designator);
            }
            for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
                let svg = render_design_svg(&r, style, true);
                for p in &parts {
                    assert_eq!(svg.matches(&format!(">{}</text>", p.designator)).count(), 1, "{key}: {}", p.designator);
                    // Capacitors, diodes and TVS carry the part list's own words; resistors the
                    // style's resistor notation, as every resistor of the sheet.
                    let value = match (p.kind, style) {
                        (NetworkPartKind::Resistor, SymbolStyle::Iec60617) => rkm(p.value),
                        (NetworkPartKind::Resistor, SymbolStyle::Ieee315) => engineering_ohms(p.value),
                        _ => p.value_text.clone(),
                    };
                    assert!(svg.contains(&format!(">{}</text>", xml_escape(&value))), "{key}: {value} of {} missing", p.designator);
                }
                assert!(svg.contains(&format!(">{FIELD_LABEL}</text>")), "{key}: the field terminal is labelled");
            }
        }
    }

    #[test]
    fn the_network_connects_what_its_nets_name_and_joins_the_trigger_at_its_input() {
        for (key, r) in cases() {
            let layout = design_layout(&r);
            crate::schematic::tests::check_connectivity(&key, &layout);
            // The row's last node is the trigger's input: the filter capacitor (or the last part)
            // touches the "in" net, and the field terminal's net reaches only the first resistor.
            let parts = network_parts_of(&r);
            let on_in = layout.parts.iter().filter(|p| parts.iter().any(|q| q.designator == p.designator)).any(|p| p.pins.iter().any(|q| q.net == INPUT_NET));
            assert!(on_in, "{key}: the network reaches the input");
            let field_pins = layout.parts.iter().flat_map(|p| &p.pins).filter(|q| q.net == FIELD_NET).count();
            assert_eq!(field_pins, 1, "{key}");
        }
    }

    #[test]
    fn no_part_of_the_drawing_runs_into_another() {
        let mut checked = 0;
        for (key, r) in cases() {
            let layout = design_layout(&r);
            let parts = network_parts_of(&r);
            for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
                let boxes: Vec<(&str, Vec<crate::schematic::Extent>)> =
                    layout.parts.iter().map(|p| (p.designator.as_str(), part_extents(p, style))).collect();
                for (i, (a, ea)) in boxes.iter().enumerate() {
                    for (b, eb) in &boxes[i + 1..] {
                        // Every pair that holds a network part; the trigger's own parts are
                        // checked among themselves below.
                        if !parts.iter().any(|p| p.designator == *a || p.designator == *b) {
                            continue;
                        }
                        checked += 1;
                        for x in ea {
                            for y in eb {
                                assert!(!x.overlaps(y), "{key} {style:?}: {a} {x:?} runs into {b} {y:?}");
                            }
                        }
                    }
                }
                // The network's texts stay on the sheet and clear the wires they do not end on.
                for p in layout.parts.iter().filter(|p| parts.iter().any(|q| q.designator == p.designator)) {
                    for e in part_extents(p, style) {
                        assert!(e.x0 >= 0.0 && e.x1 <= layout.width as f64 && e.y0 >= 0.0, "{key}: {} off the sheet {e:?}", p.designator);
                    }
                }
            }
        }
        assert!(checked > 100, "pairs checked: {checked}");
    }

    #[test]
    fn the_overlap_check_catches_parts_drawn_over_each_other() {
        // The check can fail: two resistors one unit apart, and a text over a body.
        let r = |d: &str, x: i32, y: i32, dir: Direction| PlacedPart {
            designator: d.into(),
            symbol: PartSymbol::Resistor { resistance_ohm: 4.7e3, in_part_list: true },
            at: gp(x, y),
            direction: dir,
            text_side: Direction::Right,
            pins: vec![],
        };
        let hits = |a: &PlacedPart, b: &PlacedPart| {
            part_extents(a, SymbolStyle::Iec60617).iter().any(|x| part_extents(b, SymbolStyle::Iec60617).iter().any(|y| x.overlaps(y)))
        };
        assert!(hits(&r("R1", 0, 0, Direction::Right), &r("R2", 2, 0, Direction::Right)));
        assert!(hits(&r("R1", 10, 0, Direction::Down), &r("R2", 11, 2, Direction::Down)), "value text over the neighbour");
        assert!(!hits(&r("R1", 0, 0, Direction::Right), &r("R2", 4, 0, Direction::Right)), "end to end only touch");
    }

    #[test]
    fn the_trigger_keeps_its_drawing_below_the_network() {
        let r = sawmill();
        let plain = r.circuit.schematic();
        let with = design_layout(&r);
        let n = network_parts_of(&r).len();
        assert_eq!(with.parts.len(), plain.parts.len() + n);
        let dy = with.parts[n].at.y - plain.parts[0].at.y;
        assert!(dy > 0);
        for (a, b) in plain.parts.iter().zip(&with.parts[n..]) {
            assert_eq!((a.designator.as_str(), a.at.x, a.at.y + dy), (b.designator.as_str(), b.at.x, b.at.y));
        }
        // The whole drawing keeps the trigger's width: it stays legible in a narrow column.
        assert_eq!(with.width, plain.width);
        // Without a network the record draws as before.
        let bare = DesignRecord { input_network: None, ..r.clone() };
        assert_eq!(design_layout(&bare), plain);
    }

    #[test]
    fn part_lines_for_another_network_draw_nothing() {
        let r = sawmill();
        let parts = network_parts_of(&r);
        let other = InputNetwork { dropper: None, ..r.input_network.clone().unwrap() };
        let rails = ClampRails::of(&r.circuit.netlist());
        assert!(network_layout(&other, &parts[..parts.len() - 1], &rails).is_none());
        let mut layout = r.circuit.schematic();
        let before = layout.clone();
        assert!(!add_network(&mut layout, &other, &parts[..1], &rails));
        assert_eq!(layout, before);
    }

    /// Writes the drawings of the cases to the folder in `HYSTERON_SVG_DIR` for a look by eye
    /// (`cargo test -p hysteron-core --lib dump_drawings -- --ignored`).
    #[test]
    #[ignore]
    fn dump_drawings() {
        let dir = std::env::var("HYSTERON_SVG_DIR").unwrap_or_else(|_| "target/schematics".into());
        std::fs::create_dir_all(&dir).unwrap();
        for (key, r) in cases() {
            for (tag, style) in [("iec", SymbolStyle::Iec60617), ("ieee", SymbolStyle::Ieee315)] {
                std::fs::write(format!("{dir}/{key}-{tag}.svg"), render_design_svg(&r, style, true)).unwrap();
            }
        }
    }
}
