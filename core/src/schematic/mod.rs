//! The schematic: the public face of three layers, plus the two entry points that take a
//! [`Topology`].
//!
//! - [`sheet`]: the sheet as plain data ([`SchematicLayout`]: parts, pins, wires, junctions, net
//!   labels on a grid); below the netlist, it knows no circuit;
//! - [`layout`]: placing a [`Netlist`](crate::netlist::Netlist) on the sheet ([`auto_layout`] for
//!   the comparator and gate topologies, [`bjt_layout`] for the two-transistor trigger); each
//!   topology picks one in its own `impl Netlisted`;
//! - [`svg`]: drawing a sheet as SVG in IEC 60617 or IEEE 315 symbols ([`render_layout_svg`]);
//! - [`network`]: the input network (dropper, series resistor, clamp, filter) in a row in front
//!   of the trigger, from the field terminal to its input;
//! - [`application`]: the oscillator's and debouncer's R and C below the trigger, and
//!   [`render_design_svg`], the drawing of a whole design record.
//!
//! Only this file and [`application`] sit above the topologies ([`render_svg`],
//! [`render_svg_titled`], [`render_design_svg`]); the three layers never import a topology, so the topology modules can use them without an import circle.

pub mod application;
pub mod layout;
pub mod network;
pub mod sheet;
pub mod svg;

pub use application::{design_layout, render_design_svg};
pub use layout::{auto_layout, bjt_layout};
pub use sheet::{
    gp, Direction, GridPoint, LabelKind, NetLabel, PartSymbol, PlacedPart, PlacedPin, SchematicLayout, Wire,
};
pub use svg::{engineering_ohms, part_extents, render_layout_svg, rkm, xml_escape, Extent, SymbolStyle, GRID_PX, VALUE_DIGITS};

use crate::netlist::Netlisted;
use crate::topology::Topology;

/// Renders a topology's schematic as a standalone SVG document.
///
/// ```
/// use hysteron_core::catalog;
/// use hysteron_core::schematic::{render_svg, SymbolStyle};
/// let circuit = catalog::templates()[0].record().circuit;
/// let svg = render_svg(&circuit, SymbolStyle::Ieee315);
/// assert!(svg.starts_with("<svg") && svg.contains(">R3</text>") && svg.contains(">U1</text>"));
/// ```
pub fn render_svg(circuit: &Topology, style: SymbolStyle) -> String {
    render_layout_svg(&circuit.schematic(), style, None)
}

/// Renders a topology's schematic with a title line (the design's name), escaped.
pub fn render_svg_titled(circuit: &Topology, style: SymbolStyle, title: &str) -> String {
    render_layout_svg(&circuit.schematic(), style, Some(title))
}


#[cfg(test)]
mod tests {
    use super::*;
    use crate::catalog;
    use crate::netlist::ResistorRole;
    use crate::topology::Circuit;

    /// Union-find over grid points, for the connectivity check.
    struct Groups(std::collections::HashMap<GridPoint, GridPoint>);

    impl Groups {
        fn find(&mut self, p: GridPoint) -> GridPoint {
            let parent = *self.0.entry(p).or_insert(p);
            if parent == p {
                p
            } else {
                let root = self.find(parent);
                self.0.insert(p, root);
                root
            }
        }
        fn union(&mut self, a: GridPoint, b: GridPoint) {
            let (ra, rb) = (self.find(a), self.find(b));
            if ra != rb {
                self.0.insert(ra, rb);
            }
        }
    }

    fn on_wire(p: GridPoint, w: &Wire) -> bool {
        let (x0, x1) = (w.from.x.min(w.to.x), w.from.x.max(w.to.x));
        let (y0, y1) = (w.from.y.min(w.to.y), w.from.y.max(w.to.y));
        (x0 == x1 && p.x == x0 && (y0..=y1).contains(&p.y)) || (y0 == y1 && p.y == y0 && (x0..=x1).contains(&p.x))
    }

    /// Checks that the drawing connects exactly what the netlist connects: pins on the same net
    /// are joined by wires (or by labels naming the same net), pins on different nets are not.
    pub(super) fn check_connectivity(key: &str, layout: &SchematicLayout) {
        let mut g = Groups(Default::default());
        let mut points: Vec<GridPoint> = Vec::new();
        for w in &layout.wires {
            points.push(w.from);
            points.push(w.to);
            g.union(w.from, w.to);
        }
        let pins: Vec<&PlacedPin> = layout.parts.iter().flat_map(|p| &p.pins).collect();
        for p in &pins {
            points.push(p.at);
        }
        for l in &layout.labels {
            points.push(l.at);
        }
        // Wire ends and pins that land on a wire's interior join it (T-junctions carry a dot).
        for &p in &points {
            for w in &layout.wires {
                if on_wire(p, w) {
                    g.union(p, w.from);
                }
            }
        }
        // Labels naming the same net join their points (rails and grounds connect by name).
        for a in &layout.labels {
            for b in &layout.labels {
                if a.net == b.net {
                    g.union(a.at, b.at);
                }
            }
        }
        for a in &pins {
            for b in &pins {
                let same = g.find(a.at) == g.find(b.at);
                assert_eq!(same, a.net == b.net, "{key}: pin {} on {} vs pin {} on {}", a.name, a.net, b.name, b.net);
            }
            // Every pin is connected to something: a wire, a label or another pin.
            let linked = layout.wires.iter().any(|w| on_wire(a.at, w)) || layout.labels.iter().any(|l| l.at == a.at);
            assert!(linked, "{key}: pin {} at {:?} is left open", a.name, a.at);
        }
        for l in &layout.labels {
            for p in &pins {
                if g.find(l.at) == g.find(p.at) {
                    assert_eq!(l.net, p.net, "{key}: label {} touches pin on {}", l.text, p.net);
                }
            }
        }
        // Wires stay on the sheet.
        for w in &layout.wires {
            for p in [w.from, w.to] {
                assert!(
                    p.x >= 0 && p.y >= 0 && p.x <= layout.width && p.y <= layout.height,
                    "{key}: wire off the sheet at {p:?}"
                );
            }
        }
    }

    pub(super) fn variants() -> Vec<(String, Topology)> {
        use crate::device::{Comparator, Rail};
        use crate::topology::cmos_buffer::{BiasRail, CmosBufferSchmitt, CmosGate};
        use crate::topology::noninverting::{NonInvertingSchmitt, Reference};
        use crate::topology::open_drain::OpenDrainSchmitt;
        use crate::topology::plain::PlainComparator;
        use crate::topology::schmitt_gate::{SchmittGate, SchmittInput};
        use crate::topology::supply_monitor::{MonitorOutput, MonitorSupply, SupplyMonitor};
        use crate::topology::{bjt_pair::EmitterCoupledSchmitt, inverting::InvertingSchmitt};
        let dev = Comparator { source_resistance_ohm: 1e3, bias_plus_a: 1e-9, ..Comparator::ideal(5.0) };
        let mut v: Vec<(String, Topology)> = catalog::templates()
            .into_iter()
            .chain(catalog::demos())
            .map(|s| (s.key.to_string(), s.record().circuit))
            .collect();
        // The reference as a part: zener and adjustable shunt reference on the (−) input.
        let ni = NonInvertingSchmitt::with_divider(10e3, 100e3, 47e3, 47e3, Comparator::ideal(12.0));
        for r in [
            Reference::Zener(crate::topology::reference::ZenerReference::default()),
            Reference::Shunt(crate::topology::reference::ShuntReference::default()),
        ] {
            let t = Topology::NonInverting(NonInvertingSchmitt { reference: r, ..ni.clone() });
            v.push((format!("ni-{}", r.kind()), t.clone()));
            let plain = Topology::Plain(PlainComparator { reference: r, ..PlainComparator::non_inverting_with_divider(47e3, 47e3, Comparator::ideal(12.0)) });
            v.push((format!("plain-{}", r.kind()), plain));
        }
        v.push((
            "inv-split".into(),
            Topology::Inverting(InvertingSchmitt::split_supply(
                10e3,
                47e3,
                Comparator { negative_rail_v: -5.0, ..dev },
            )),
        ));
        v.push((
            "inv-ref".into(),
            Topology::Inverting(InvertingSchmitt {
                ra_ohm: None,
                rail_b: Rail::Fixed(1.2),
                ..InvertingSchmitt::single_supply(1.0, 10e3, 47e3, dev)
            }),
        ));
        v.push((
            "ni-fixed".into(),
            Topology::NonInverting(NonInvertingSchmitt::with_fixed_reference(10e3, 100e3, 1.2, dev)),
        ));
        v.push((
            "od-ni".into(),
            Topology::OpenDrain(OpenDrainSchmitt {
                rl_ohm: Some(47e3),
                ..OpenDrainSchmitt::non_inverting(10e3, 100e3, Reference::divider(20e3, 30e3), 4.7e3, dev)
            }),
        ));
        v.push((
            "plain-inv".into(),
            Topology::Plain(PlainComparator {
                sense: crate::analysis::Sense::Inverting,
                reference: Reference::fixed(1.25),
                device: dev,
            }),
        ));
        v.push((
            "plain-inv-div".into(),
            Topology::Plain(PlainComparator {
                sense: crate::analysis::Sense::Inverting,
                reference: Reference::divider(10e3, 10e3),
                device: dev,
            }),
        ));
        let mut mon = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, dev);
        mon.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: 0.2 };
        v.push(("mon-self".into(), Topology::SupplyMonitor(mon.clone())));
        mon.output = MonitorOutput::OpenDrain { rpu_ohm: 10e3, pullup_rail: Rail::Supply };
        v.push(("mon-self-od".into(), Topology::SupplyMonitor(mon)));
        v.push(("cmos".into(), Topology::CmosBuffer(CmosBufferSchmitt::new(10e3, 47e3, CmosGate::default()))));
        v.push((
            "cmos-r3".into(),
            Topology::CmosBuffer(CmosBufferSchmitt {
                r3_ohm: Some(82e3),
                r3_rail: BiasRail::Supply,
                ..CmosBufferSchmitt::new(10e3, 47e3, CmosGate::default())
            }),
        ));
        v.push(("gate-bare".into(), Topology::SchmittGate(SchmittGate::bare(SchmittInput::default()))));
        v.push((
            "gate-net".into(),
            Topology::SchmittGate(SchmittGate {
                ra_ohm: Some(47e3),
                rb_ohm: Some(100e3),
                rc_ohm: Some(220e3),
                ..SchmittGate::bare(SchmittInput::default())
            }),
        ));
        v.push((
            "bjt".into(),
            Topology::BjtPair(EmitterCoupledSchmitt {
                load_ohm: Some(10e3),
                ..EmitterCoupledSchmitt::new(12.0, 10e3, 10e3, 4.7e3, 2.2e3, 1.5e3)
            }),
        ));
        v
    }

    #[test]
    fn every_layout_connects_what_the_netlist_connects_and_uses_no_spare_row() {
        for (key, c) in variants() {
            let layout = c.schematic();
            check_connectivity(&key, &layout);
            let net = c.netlist();
            let drawn: Vec<&str> = layout.parts.iter().map(|p| p.designator.as_str()).collect();
            for r in net.resistors.iter().filter(|r| r.role != ResistorRole::SourceResistance) {
                assert_eq!(drawn.iter().filter(|d| **d == r.designator).count(), 1, "{key}: {}", r.designator);
            }
            // All parts found a slot: the sheet kept its standard height.
            assert!(layout.height <= 31, "{key}: a part went to the spare row");
            for d in &net.devices {
                assert!(drawn.contains(&d.designator()), "{key}: {}", d.designator());
            }
            for g in &net.regulators {
                assert_eq!(drawn.iter().filter(|d| **d == g.designator()).count(), 1, "{key}: {}", g.designator());
            }
        }
    }

    #[test]
    fn every_part_designator_and_value_is_in_the_svg() {
        for (key, c) in variants() {
            for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
                let svg = render_svg(&c, style);
                for p in c.parameters().iter().filter(|p| p.designator.is_some()) {
                    let d = p.designator.as_deref().unwrap_or_default();
                    assert!(svg.contains(&format!(">{d}</text>")), "{key}: {d} missing");
                    let value = match style {
                        SymbolStyle::Iec60617 => rkm(p.value),
                        SymbolStyle::Ieee315 => engineering_ohms(p.value),
                    };
                    assert!(
                        svg.contains(&format!(">{}</text>", xml_escape(&value))),
                        "{key}: value {value} of {d} missing"
                    );
                }
            }
        }
    }
}
