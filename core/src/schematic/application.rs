//! The parts of the applications that ride on the trigger (the RC relaxation oscillator and the
//! RC switch debouncer, shared/DOMAIN.md §1e) drawn below the trigger's own schematic, with the
//! designators and values of the part list ([`crate::bom::application`]).
//!
//! Each group is joined to the trigger by net labels of the same name ("IN", "OUT"), as a sheet
//! joins distant parts:
//! - oscillator: the timing resistor R from OUT to the timing node, which is the trigger's IN, and
//!   the timing capacitor C from that node to 0 V;
//! - debouncer: R1 from the debouncer's pull-up rail VDD to the switch node (the switch closes it to
//!   0 V), R2 from the switch node to the trigger's IN, and C from IN to 0 V.
//!
//! [`render_design_svg`] is the record-level entry point the page and the files use.

use super::sheet::{
    gp, Direction, GridPoint, LabelKind, NetLabel, PartSymbol, PlacedPart, PlacedPin, SchematicLayout, Wire,
};
use super::svg::{render_layout_svg, SymbolStyle};
use crate::bom::application::{ApplicationPart, PartKind};
use crate::netlist::{Netlisted, GROUND, INPUT_NET, OUTPUT_NET};
use crate::notation::{format_with_unit, Unit};
use crate::record::DesignRecord;
use crate::signal::report::ApplicationSettings;

/// The net of the debouncer's pull-up rail.
pub const DEBOUNCE_RAIL_NET: &str = "vdd_debounce";
/// The net of the debouncer's switch node.
pub const SWITCH_NET: &str = "switch";

/// Renders a design's schematic as a standalone SVG document: the trigger as its topology draws
/// it, and below it the oscillator's and debouncer's parts when the record has them (with the part
/// list's designators and series values). With `titled`, the design's name heads the sheet.
/// A design whose part list cannot be made (its analysis fails) is drawn without those parts.
pub fn render_design_svg(record: &DesignRecord, style: SymbolStyle, titled: bool) -> String {
    render_layout_svg(&design_layout(record), style, titled.then_some(record.name.as_str()))
}

/// The sheet of a whole design record: the trigger as its topology draws it, the input network
/// in front of it when the record has one ([`super::network::add_network`]), and the
/// oscillator's and debouncer's parts below. The parts beside the trigger's own take the part
/// list's designators and values; a design whose part list cannot be made (its analysis fails)
/// is drawn without them.
pub fn design_layout(record: &DesignRecord) -> SchematicLayout {
    let mut layout = record.circuit.schematic();
    let network = record.input_network.as_ref().filter(|n| n.has_parts());
    if record.application.is_none() && network.is_none() {
        return layout;
    }
    let part_list = crate::topology::analyse(&record.circuit, &record.checks)
        .and_then(|a| crate::overview::part_list(record, &a))
        .ok();
    if let (Some(net), Some(b)) = (network, &part_list) {
        let rails = super::network::ClampRails::of(&record.circuit.netlist());
        super::network::add_network(&mut layout, net, &b.input_network, &rails);
    }
    if let Some(settings) = &record.application {
        let parts = part_list.map(|b| b.application).unwrap_or_default();
        add_application_parts(&mut layout, &parts, settings);
    }
    layout
}

struct Placer<'a> {
    s: &'a mut SchematicLayout,
}

impl Placer<'_> {
    fn wire(&mut self, a: GridPoint, b: GridPoint) {
        self.s.wires.push(Wire { from: a, to: b });
    }

    fn junction(&mut self, at: GridPoint) {
        if !self.s.junctions.contains(&at) {
            self.s.junctions.push(at);
        }
    }

    fn label(&mut self, text: &str, at: GridPoint, kind: LabelKind, toward: Direction, net: &str) {
        self.s.labels.push(NetLabel { text: text.into(), at, kind, toward, net: net.into() });
    }

    /// A two-pin part from `at` going `direction` (Right or Down) by four units, pin 1 on `net_a`.
    fn part(&mut self, p: &ApplicationPart, at: GridPoint, direction: Direction, nets: (&str, &str), text_side: Direction) {
        let end = if direction == Direction::Right { gp(at.x + 4, at.y) } else { gp(at.x, at.y + 4) };
        let symbol = match p.kind {
            PartKind::Resistor => PartSymbol::Resistor { resistance_ohm: p.value, in_part_list: true },
            PartKind::Capacitor => PartSymbol::Capacitor { capacitance_f: p.value },
        };
        self.s.parts.push(PlacedPart {
            designator: p.designator.clone(),
            symbol,
            at,
            direction,
            text_side,
            pins: vec![
                PlacedPin { name: "1".into(), at, net: nets.0.into() },
                PlacedPin { name: "2".into(), at: end, net: nets.1.into() },
            ],
        });
    }
}

/// Adds the oscillator's and debouncer's parts (`parts`, as [`crate::bom::application::application_parts`]
/// made them) below the trigger on `layout`, widening and lengthening the sheet to hold them.
/// Parts of a group that is not complete (a part list made without it) are left out.
pub fn add_application_parts(layout: &mut SchematicLayout, parts: &[ApplicationPart], settings: &ApplicationSettings) {
    let find = |application: &str, kind: PartKind, nth: usize| {
        parts.iter().filter(|p| p.application == application && p.kind == kind).nth(nth)
    };
    let oscillator = match (settings.oscillator, find("oscillator", PartKind::Resistor, 0), find("oscillator", PartKind::Capacitor, 0)) {
        (Some(_), Some(r), Some(c)) => Some((r, c)),
        _ => None,
    };
    let debouncer = match (
        settings.debounce,
        find("debouncer", PartKind::Resistor, 0),
        find("debouncer", PartKind::Resistor, 1),
        find("debouncer", PartKind::Capacitor, 0),
    ) {
        (Some(d), Some(r1), Some(r2), Some(c)) => Some((d.supply_v, r1, r2, c)),
        _ => None,
    };
    if oscillator.is_none() && debouncer.is_none() {
        return;
    }
    let base = layout.height;
    // The row the resistors to IN sit on: below the debouncer's R1 when there is one.
    let row = if debouncer.is_some() { base + 6 } else { base + 2 };
    let mut x = 6;
    let mut pl = Placer { s: layout };
    if let Some((r, c)) = oscillator {
        // OUT ── R ──┬── IN
        //            C
        //           0 V
        pl.wire(gp(x, row), gp(x + 2, row));
        pl.label("OUT", gp(x, row), LabelKind::Output, Direction::Left, OUTPUT_NET);
        pl.part(r, gp(x + 2, row), Direction::Right, (OUTPUT_NET, INPUT_NET), Direction::Up);
        pl.wire(gp(x + 6, row), gp(x + 14, row));
        pl.part(c, gp(x + 10, row), Direction::Down, (INPUT_NET, GROUND), Direction::Right);
        pl.junction(gp(x + 10, row));
        pl.label("0 V", gp(x + 10, row + 4), LabelKind::Ground, Direction::Down, GROUND);
        pl.label("IN", gp(x + 14, row), LabelKind::Input, Direction::Right, INPUT_NET);
        x += 24;
    }
    if let Some((supply_v, r1, r2, c)) = debouncer {
        //   VDD
        //    R1
        //    ├── R2 ──┬── IN
        // SWITCH      C
        //            0 V
        let s_at = gp(x + 2, row);
        let rail = format!("VDD {}", format_with_unit(supply_v, 3, Unit::Volt));
        pl.label(&rail, gp(x + 2, row - 4), LabelKind::Rail, Direction::Up, DEBOUNCE_RAIL_NET);
        pl.part(r1, gp(x + 2, row - 4), Direction::Down, (DEBOUNCE_RAIL_NET, SWITCH_NET), Direction::Right);
        pl.wire(s_at, gp(x + 2, row + 2));
        pl.label("SWITCH", gp(x + 2, row + 2), LabelKind::Input, Direction::Down, SWITCH_NET);
        pl.wire(s_at, gp(x + 4, row));
        pl.junction(s_at);
        pl.part(r2, gp(x + 4, row), Direction::Right, (SWITCH_NET, INPUT_NET), Direction::Up);
        pl.wire(gp(x + 8, row), gp(x + 16, row));
        pl.part(c, gp(x + 12, row), Direction::Down, (INPUT_NET, GROUND), Direction::Right);
        pl.junction(gp(x + 12, row));
        pl.label("0 V", gp(x + 12, row + 4), LabelKind::Ground, Direction::Down, GROUND);
        pl.label("IN", gp(x + 16, row), LabelKind::Input, Direction::Right, INPUT_NET);
        x += 24;
    }
    layout.width = layout.width.max(x);
    layout.height = row + 4 + 4;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::schematic::SymbolStyle;

    fn demo(key: &str) -> DesignRecord {
        crate::catalog::demos().into_iter().find(|s| s.key == key).unwrap().record()
    }

    fn application_parts(r: &DesignRecord) -> Vec<ApplicationPart> {
        let a = crate::topology::analyse(&r.circuit, &r.checks).unwrap();
        crate::overview::part_list(r, &a).unwrap().application
    }

    #[test]
    fn every_application_part_of_the_part_list_is_drawn_with_its_value_in_both_styles() {
        for key in ["beehive-clock", "rain-gauge"] {
            let r = demo(key);
            let parts = application_parts(&r);
            assert!(!parts.is_empty(), "{key}: the demo has application parts");
            for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
                let svg = render_design_svg(&r, style, true);
                for p in &parts {
                    assert!(svg.contains(&format!(">{}</text>", p.designator)), "{key}: {} missing", p.designator);
                    let value = match (p.kind, style) {
                        (PartKind::Capacitor, _) => format_with_unit(p.value, 3, Unit::Farad),
                        (PartKind::Resistor, SymbolStyle::Iec60617) => crate::schematic::rkm(p.value),
                        (PartKind::Resistor, SymbolStyle::Ieee315) => crate::schematic::engineering_ohms(p.value),
                    };
                    assert!(svg.contains(&format!(">{}</text>", crate::schematic::xml_escape(&value))), "{key}: {value} missing");
                }
            }
            // The trigger's own drawing is unchanged above the added parts.
            let plain = r.circuit.schematic();
            let mut with = plain.clone();
            add_application_parts(&mut with, &parts, r.application.as_ref().unwrap());
            assert_eq!(&with.parts[..plain.parts.len()], &plain.parts[..]);
            assert!(with.height > plain.height);
        }
    }

    #[test]
    fn the_two_conventions_draw_the_capacitor_differently() {
        let r = demo("rain-gauge");
        let iec = render_design_svg(&r, SymbolStyle::Iec60617, false);
        let ieee = render_design_svg(&r, SymbolStyle::Ieee315, false);
        // IEEE 315's curved plate is a path; IEC 60617 draws two straight plates.
        assert!(ieee.contains("<path d=\"M") && !iec.contains("<path d=\"M"));
    }

    #[test]
    fn the_added_parts_connect_what_their_nets_name_and_stay_on_the_sheet() {
        for key in ["beehive-clock", "rain-gauge"] {
            let r = demo(key);
            let mut layout = SchematicLayout { width: 46, height: 20, ..Default::default() };
            add_application_parts(&mut layout, &application_parts(&r), r.application.as_ref().unwrap());
            let on_wire = |p: GridPoint, w: &Wire| {
                let (x0, x1) = (w.from.x.min(w.to.x), w.from.x.max(w.to.x));
                let (y0, y1) = (w.from.y.min(w.to.y), w.from.y.max(w.to.y));
                (x0..=x1).contains(&p.x) && (y0..=y1).contains(&p.y)
            };
            for part in &layout.parts {
                for pin in &part.pins {
                    // Each pin meets a wire or a label of its own net, and no label of another net.
                    let labels: Vec<&NetLabel> = layout.labels.iter().filter(|l| l.at == pin.at).collect();
                    assert!(labels.iter().all(|l| l.net == pin.net), "{key}: {} pin {}", part.designator, pin.name);
                    let wired = layout.wires.iter().any(|w| on_wire(pin.at, w));
                    assert!(wired || !labels.is_empty(), "{key}: {} pin {} is left open", part.designator, pin.name);
                    assert!(pin.at.x >= 0 && pin.at.x <= layout.width && pin.at.y <= layout.height, "{key}: off the sheet");
                }
            }
            // Pins of different nets never touch the same wire.
            for w in &layout.wires {
                let nets: std::collections::BTreeSet<&str> = layout
                    .parts
                    .iter()
                    .flat_map(|p| &p.pins)
                    .filter(|p| on_wire(p.at, w))
                    .map(|p| p.net.as_str())
                    .collect();
                assert!(nets.len() <= 1, "{key}: wire {w:?} joins {nets:?}");
            }
        }
    }

    #[test]
    fn a_record_without_applications_draws_as_its_topology() {
        let r = crate::catalog::templates()[0].record();
        assert!(r.application.is_none());
        assert_eq!(
            render_design_svg(&r, SymbolStyle::Iec60617, true),
            crate::schematic::render_svg_titled(&r.circuit, SymbolStyle::Iec60617, &r.name)
        );
    }
}
