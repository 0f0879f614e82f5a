//! The schematic: a grid placement of the netlist's parts, wires and net labels
//! ([`SchematicLayout`], made by each topology's [`Netlisted::schematic`]) and an SVG renderer
//! ([`render_svg`]) in either symbol convention.
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
//!
//! Layout: the comparator and gate topologies share one automatic placement ([`auto_layout`]):
//! the device in the middle, the (+) or gate-input node with slots left (signal or series
//! resistor), up and down (resistors to rails), the feedback resistor over the top, the (−) node
//! below with a left and a down slot, and the output with a pull-up and a load. Parts that fit no
//! slot go to a spare row at the bottom with both ends labelled, so every part is always drawn.
//! The two-transistor trigger has its own placement ([`bjt_layout`]).

use crate::netlist::{
    ActiveDevice, GateThreshold, NetResistor, Netlist, Netlisted, ResistorRole, SourceRole, GROUND, INPUT_NET,
    OUTPUT_NET, SOURCE_NET,
};
use crate::topology::Topology;
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

/// A point of the schematic grid (one unit is [`GRID_PX`] pixels).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct GridPoint {
    /// Column, grid units from the left.
    pub x: i32,
    /// Row, grid units from the top.
    pub y: i32,
}

/// Shorthand for a grid point.
pub const fn gp(x: i32, y: i32) -> GridPoint {
    GridPoint { x, y }
}

/// Pixels per grid unit in the SVG.
pub const GRID_PX: f64 = 12.0;

/// A straight wire between two grid points (horizontal or vertical).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Wire {
    /// One end.
    pub from: GridPoint,
    /// The other end.
    pub to: GridPoint,
}

/// Direction a part or label extends from its anchor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    /// Toward the top of the sheet.
    Up,
    /// Toward the bottom.
    Down,
    /// Toward the left.
    Left,
    /// Toward the right.
    Right,
}

/// What a placed part is drawn as.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum PartSymbol {
    /// A resistor, four grid units between its pins.
    Resistor {
        /// Resistance, ohms (drawn as its value).
        resistance_ohm: f64,
        /// Whether it is a part of the part list (an external load is drawn dashed).
        in_part_list: bool,
    },
    /// A comparator or op-amp: 8×8 units; pins (+) at (0,2), (−) at (0,6), output at (8,4),
    /// positive supply at (4,0), negative supply at (4,8).
    Comparator {
        /// Open-collector/open-drain output.
        open_drain: bool,
    },
    /// A logic buffer or inverter: 8×8 units; input at (0,4), output at (8,4), supply at (4,0),
    /// ground at (4,8).
    LogicGate {
        /// Schmitt-trigger input (drawn with the hysteresis sign).
        schmitt: bool,
        /// Negated output.
        inverting: bool,
    },
    /// An NPN transistor: base at (0,3), collector at (4,0), emitter at (4,6).
    Npn,
}

/// A pin of a placed part: where it is and which net it belongs to.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlacedPin {
    /// Pin name ("1", "2", "+", "-", "out", "v+", "v-", "b", "c", "e").
    pub name: String,
    /// Grid position.
    pub at: GridPoint,
    /// The netlist node it connects to.
    pub net: String,
}

/// A part on the sheet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlacedPart {
    /// Designator (R1, U1, Q1…).
    pub designator: String,
    /// Symbol and value.
    pub symbol: PartSymbol,
    /// Anchor: the first pin of a resistor, the top-left corner of a device's 8×8 box.
    pub at: GridPoint,
    /// For resistors: the direction from the first pin to the second (`Right` or `Down`).
    pub direction: Direction,
    /// Which side of the part its designator and value are written on.
    pub text_side: Direction,
    /// The pins, with their nets.
    pub pins: Vec<PlacedPin>,
}

/// What a net label marks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum LabelKind {
    /// The circuit input (the signal, or the monitored rail).
    Input,
    /// The circuit output.
    Output,
    /// A reference voltage.
    Reference,
    /// A supply or pull-up rail (drawn as a bar).
    Rail,
    /// 0 V (drawn as the ground symbol).
    Ground,
}

/// A net label attached to a grid point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetLabel {
    /// Text shown (e.g. "IN", "VCC 5 V").
    pub text: String,
    /// The grid point it is attached to.
    pub at: GridPoint,
    /// What it marks.
    pub kind: LabelKind,
    /// Which way the symbol extends from the point.
    pub toward: Direction,
    /// The netlist node it names.
    pub net: String,
}

/// Everything needed to draw a schematic.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct SchematicLayout {
    /// Width of the sheet, grid units.
    pub width: i32,
    /// Height of the sheet, grid units.
    pub height: i32,
    /// Parts.
    pub parts: Vec<PlacedPart>,
    /// Wires.
    pub wires: Vec<Wire>,
    /// Junction dots (where three or more wires meet).
    pub junctions: Vec<GridPoint>,
    /// Net labels, rail bars and grounds.
    pub labels: Vec<NetLabel>,
}

impl SchematicLayout {
    fn wire(&mut self, a: GridPoint, b: GridPoint) {
        if a != b {
            self.wires.push(Wire { from: a, to: b });
        }
    }

    /// A polyline of wires through the points.
    fn path(&mut self, points: &[GridPoint]) {
        for w in points.windows(2) {
            self.wire(w[0], w[1]);
        }
    }

    fn junction(&mut self, at: GridPoint) {
        if !self.junctions.contains(&at) {
            self.junctions.push(at);
        }
    }

    /// Places a resistor from `at` going `direction` (Right or Down) by four units.
    fn resistor(
        &mut self,
        r: &NetResistor,
        at: GridPoint,
        direction: Direction,
        first_net: &str,
        text_side: Direction,
    ) {
        let end = match direction {
            Direction::Right => gp(at.x + 4, at.y),
            Direction::Left => gp(at.x - 4, at.y),
            Direction::Down => gp(at.x, at.y + 4),
            Direction::Up => gp(at.x, at.y - 4),
        };
        let (a, b) = if first_net == r.node_a { (&r.node_a, &r.node_b) } else { (&r.node_b, &r.node_a) };
        // Store with the anchor at the top or left pin.
        let (anchor, dir, pins) = match direction {
            Direction::Right | Direction::Down => (at, direction, vec![pin("1", at, a), pin("2", end, b)]),
            Direction::Left => (end, Direction::Right, vec![pin("1", end, b), pin("2", at, a)]),
            Direction::Up => (end, Direction::Down, vec![pin("1", end, b), pin("2", at, a)]),
        };
        self.parts.push(PlacedPart {
            designator: r.designator.clone(),
            symbol: PartSymbol::Resistor {
                resistance_ohm: r.resistance_ohm,
                in_part_list: r.role == ResistorRole::PartList,
            },
            at: anchor,
            direction: dir,
            text_side,
            pins,
        });
    }

    /// Attaches the right label for a net at a point: ground symbol, rail bar, input/output flag.
    fn terminal(&mut self, net: &Netlist, node: &str, at: GridPoint, toward: Direction) {
        let node = if node == SOURCE_NET { INPUT_NET } else { node };
        let kind = if node == GROUND {
            LabelKind::Ground
        } else if node == INPUT_NET {
            LabelKind::Input
        } else if node == OUTPUT_NET {
            LabelKind::Output
        } else {
            match net
                .sources
                .iter()
                .find(|s| s.node_plus == node || (s.node_minus == node && s.role == SourceRole::Dropout))
            {
                Some(s) if s.role == SourceRole::Reference => LabelKind::Reference,
                Some(_) => LabelKind::Rail,
                None => LabelKind::Reference,
            }
        };
        let toward = if kind == LabelKind::Ground { Direction::Down } else { toward };
        self.labels.push(NetLabel { text: net.net_label(node), at, kind, toward, net: node.to_string() });
    }
}

fn pin(name: &str, at: GridPoint, net: &str) -> PlacedPin {
    PlacedPin { name: name.into(), at, net: if net == SOURCE_NET { INPUT_NET.into() } else { net.into() } }
}

/// The other end of a resistor from `node`.
fn other<'a>(r: &'a NetResistor, node: &str) -> &'a str {
    if r.node_a == node {
        &r.node_b
    } else {
        &r.node_a
    }
}

fn touches(r: &NetResistor, node: &str) -> bool {
    r.node_a == node || r.node_b == node
}

/// The placement shared by the comparator and logic-gate topologies (see the module notes).
/// Expects one [`ActiveDevice::Comparator`] or [`ActiveDevice::LogicGate`]; anything else is
/// placed in the spare row.
pub fn auto_layout(net: &Netlist) -> SchematicLayout {
    let mut s = SchematicLayout { width: 46, height: 31, ..Default::default() };
    let resistors: Vec<&NetResistor> =
        net.resistors.iter().filter(|r| r.role != ResistorRole::SourceResistance).collect();
    let mut placed = vec![false; resistors.len()];
    let norm = |n: &str| if n == SOURCE_NET { INPUT_NET.to_string() } else { n.to_string() };

    let device_at = gp(22, 10);
    let (p_node, n_node, p_pin_y) = match net.devices.first() {
        Some(ActiveDevice::Comparator {
            designator,
            non_inverting,
            inverting,
            output,
            positive_supply,
            negative_supply,
            output_high_drop_v,
            ..
        }) => {
            s.parts.push(PlacedPart {
                designator: designator.clone(),
                symbol: PartSymbol::Comparator { open_drain: output_high_drop_v.is_none() },
                at: device_at,
                direction: Direction::Right,
                text_side: Direction::Up,
                pins: vec![
                    pin("+", gp(22, 12), non_inverting),
                    pin("-", gp(22, 16), inverting),
                    pin("out", gp(30, 14), output),
                    pin("v+", gp(26, 10), positive_supply),
                    pin("v-", gp(26, 18), negative_supply),
                ],
            });
            s.terminal(net, positive_supply, gp(26, 10), Direction::Up);
            s.terminal(net, negative_supply, gp(26, 18), Direction::Down);
            (norm(non_inverting), Some(norm(inverting)), 12)
        }
        Some(ActiveDevice::LogicGate { designator, input, output, supply, ground, threshold, inverting, .. }) => {
            s.parts.push(PlacedPart {
                designator: designator.clone(),
                symbol: PartSymbol::LogicGate {
                    schmitt: matches!(threshold, GateThreshold::Schmitt { .. }),
                    inverting: *inverting,
                },
                at: device_at,
                direction: Direction::Right,
                text_side: Direction::Up,
                pins: vec![
                    pin("in", gp(22, 14), input),
                    pin("out", gp(30, 14), output),
                    pin("v+", gp(26, 10), supply),
                    pin("v-", gp(26, 18), ground),
                ],
            });
            s.terminal(net, supply, gp(26, 10), Direction::Up);
            s.terminal(net, ground, gp(26, 18), Direction::Down);
            (norm(input), None, 14)
        }
        _ => (String::new(), None, 14),
    };

    // The (+) / gate-input node P.
    let py = p_pin_y;
    let p_at = gp(16, py);
    if !p_node.is_empty() {
        s.wire(p_at, gp(22, py));
        let mut left_used = false;
        let mut rails: Vec<usize> = Vec::new();
        for (i, r) in resistors.iter().enumerate() {
            if !touches(r, &p_node) || touches(r, OUTPUT_NET) || r.role != ResistorRole::PartList {
                continue;
            }
            let o = norm(other(r, &p_node));
            if o == INPUT_NET && !left_used {
                s.resistor(r, gp(12, py), Direction::Left, &p_node, Direction::Up);
                s.wire(gp(12, py), p_at);
                s.terminal(net, &o, gp(8, py), Direction::Left);
                left_used = true;
                placed[i] = true;
            } else if o != INPUT_NET && (o == GROUND || net.fixed_node_v(&o).is_some()) {
                rails.push(i);
            }
        }
        if p_node == INPUT_NET || (net.fixed_node_v(&p_node).is_some() && p_node != GROUND) {
            s.wire(gp(8, py), p_at);
            s.terminal(net, &p_node, gp(8, py), Direction::Left);
            left_used = true;
        } else if p_node == GROUND {
            s.terminal(net, GROUND, p_at, Direction::Down);
        }
        // Rails: highest voltage up, the other down; a third on the left if it is free.
        rails.sort_by(|&a, &b| {
            let va = net.fixed_node_v(&norm(other(resistors[a], &p_node))).unwrap_or(0.0);
            let vb = net.fixed_node_v(&norm(other(resistors[b], &p_node))).unwrap_or(0.0);
            vb.total_cmp(&va)
        });
        let (mut up_used, mut down_used) = (false, false);
        let n_rails = rails.len();
        for (k, &i) in rails.iter().enumerate() {
            let r = resistors[i];
            let o = norm(other(r, &p_node));
            let v = net.fixed_node_v(&o).unwrap_or(0.0);
            let wants_up = if n_rails >= 2 { k == 0 } else { v > 0.0 };
            if wants_up && !up_used {
                s.resistor(r, p_at, Direction::Up, &p_node, Direction::Left);
                s.terminal(net, &o, gp(16, py - 4), Direction::Up);
                up_used = true;
            } else if !down_used {
                s.resistor(r, p_at, Direction::Down, &p_node, Direction::Right);
                s.terminal(net, &o, gp(16, py + 4), Direction::Down);
                down_used = true;
            } else if !left_used {
                s.resistor(r, gp(12, py), Direction::Left, &p_node, Direction::Up);
                s.wire(gp(12, py), p_at);
                s.terminal(net, &o, gp(8, py), Direction::Left);
                left_used = true;
            } else {
                continue;
            }
            placed[i] = true;
        }
        if 1 + left_used as i32 + up_used as i32 + down_used as i32 >= 3 {
            s.junction(p_at);
        }
        // Feedback from the output over the top.
        if let Some(i) =
            resistors.iter().position(|r| touches(r, &p_node) && touches(r, OUTPUT_NET) && p_node != OUTPUT_NET)
        {
            s.resistor(resistors[i], gp(27, 4), Direction::Left, OUTPUT_NET, Direction::Up);
            s.path(&[gp(23, 4), gp(19, 4), gp(19, py)]);
            s.path(&[gp(27, 4), gp(32, 4), gp(32, 14)]);
            s.junction(gp(19, py));
            s.junction(gp(32, 14));
            placed[i] = true;
        }
    }

    // The (−) node N.
    if let Some(n_node) = &n_node {
        let n_at = gp(20, 22);
        s.path(&[gp(22, 16), gp(20, 16), n_at]);
        if n_node == GROUND {
            s.terminal(net, GROUND, n_at, Direction::Down);
        } else if n_node == INPUT_NET || net.fixed_node_v(n_node).is_some() {
            s.wire(gp(14, 22), n_at);
            s.terminal(net, n_node, gp(14, 22), Direction::Left);
        } else {
            let mut left_used = false;
            let mut down_used = false;
            let mut mine: Vec<usize> = (0..resistors.len())
                .filter(|&i| !placed[i] && touches(resistors[i], n_node) && resistors[i].role == ResistorRole::PartList)
                .collect();
            // Lowest voltage (ground) down, the rest to the left.
            mine.sort_by(|&a, &b| {
                let va = net.fixed_node_v(&norm(other(resistors[a], n_node))).unwrap_or(f64::INFINITY);
                let vb = net.fixed_node_v(&norm(other(resistors[b], n_node))).unwrap_or(f64::INFINITY);
                va.total_cmp(&vb)
            });
            for i in mine {
                let r = resistors[i];
                let o = norm(other(r, n_node));
                if o == OUTPUT_NET {
                    continue;
                }
                if !down_used && (o == GROUND || net.fixed_node_v(&o).is_some_and(|v| v <= 0.0)) {
                    s.wire(n_at, gp(20, 24));
                    s.resistor(r, gp(20, 24), Direction::Down, n_node, Direction::Right);
                    s.terminal(net, &o, gp(20, 28), Direction::Down);
                    down_used = true;
                } else if !left_used {
                    s.resistor(r, gp(18, 22), Direction::Left, n_node, Direction::Up);
                    s.wire(gp(18, 22), n_at);
                    s.terminal(net, &o, gp(14, 22), Direction::Left);
                    left_used = true;
                } else {
                    continue;
                }
                placed[i] = true;
            }
            if left_used && down_used {
                s.junction(n_at);
            }
        }
    }

    // Output: pull-up and load.
    let out_at = gp(30, 14);
    let mut out_end = 36;
    let mut pull_used = false;
    let mut load_used = false;
    for (i, r) in resistors.iter().enumerate() {
        if placed[i] || !touches(r, OUTPUT_NET) {
            continue;
        }
        let o = norm(other(r, OUTPUT_NET));
        if o == GROUND && !load_used {
            s.resistor(r, gp(38, 14), Direction::Down, OUTPUT_NET, Direction::Right);
            s.terminal(net, GROUND, gp(38, 18), Direction::Down);
            s.junction(gp(38, 14));
            out_end = 42;
            load_used = true;
        } else if o != GROUND && net.fixed_node_v(&o).is_some() && !pull_used {
            s.resistor(r, gp(35, 14), Direction::Up, OUTPUT_NET, Direction::Right);
            s.terminal(net, &o, gp(35, 10), Direction::Up);
            s.junction(gp(35, 14));
            out_end = out_end.max(38);
            pull_used = true;
        } else {
            continue;
        }
        placed[i] = true;
    }
    if !net.devices.is_empty() {
        s.wire(out_at, gp(out_end, 14));
        s.terminal(net, OUTPUT_NET, gp(out_end, 14), Direction::Right);
    }
    spare_row(&mut s, net, &resistors, &placed);
    fit_height(&mut s);
    s
}

/// Shrinks the sheet to its content: the lowest wire, part or label plus room for text below.
fn fit_height(s: &mut SchematicLayout) {
    let mut bottom = 0;
    for w in &s.wires {
        bottom = bottom.max(w.from.y).max(w.to.y);
    }
    for p in &s.parts {
        for q in &p.pins {
            bottom = bottom.max(q.at.y);
        }
    }
    for l in &s.labels {
        bottom = bottom.max(l.at.y + 1);
    }
    s.height = s.height.min(bottom + 3);
}

/// Places every resistor not yet drawn in a spare row at the bottom, both ends labelled.
fn spare_row(s: &mut SchematicLayout, net: &Netlist, resistors: &[&NetResistor], placed: &[bool]) {
    let mut x = 8;
    for (i, r) in resistors.iter().enumerate() {
        if placed[i] {
            continue;
        }
        let y = s.height + 1;
        s.resistor(r, gp(x, y), Direction::Right, &r.node_a, Direction::Up);
        s.terminal(net, &r.node_a, gp(x, y), Direction::Left);
        s.terminal(net, &r.node_b, gp(x + 4, y), Direction::Right);
        x += 16;
        if x + 12 > s.width {
            x = 8;
            s.height += 4;
        }
    }
    if resistors.iter().zip(placed).any(|(_, p)| !p) {
        s.height += 4;
    }
}

/// The placement of the emitter-coupled two-transistor trigger.
pub fn bjt_layout(net: &Netlist) -> SchematicLayout {
    let mut s = SchematicLayout { width: 46, height: 31, ..Default::default() };
    let resistors: Vec<&NetResistor> =
        net.resistors.iter().filter(|r| r.role != ResistorRole::SourceResistance).collect();
    let mut placed = vec![false; resistors.len()];
    let find = |a: &str, b: &str| resistors.iter().position(|r| touches(r, a) && touches(r, b) && a != b);
    let mut devices = net.devices.iter().filter_map(|d| match d {
        ActiveDevice::Npn { designator, collector, base, emitter, .. } => Some((designator, collector, base, emitter)),
        _ => None,
    });
    let (q1, q2) = (devices.next(), devices.next());
    let (Some(q1), Some(q2)) = (q1, q2) else {
        spare_row(&mut s, net, &resistors, &placed);
        return s;
    };
    let npn = |s: &mut SchematicLayout, q: (&String, &String, &String, &String), at: GridPoint| {
        s.parts.push(PlacedPart {
            designator: q.0.clone(),
            symbol: PartSymbol::Npn,
            at,
            direction: Direction::Right,
            text_side: Direction::Right,
            pins: vec![
                pin("b", gp(at.x, at.y + 3), q.2),
                pin("c", gp(at.x + 4, at.y), q.1),
                pin("e", gp(at.x + 4, at.y + 6), q.3),
            ],
        });
    };
    npn(&mut s, q1, gp(10, 12));
    npn(&mut s, q2, gp(26, 12));
    let (c1, b2, e) = (q1.1.as_str(), q2.2.as_str(), q1.3.as_str());
    let supply =
        net.sources.iter().find(|x| x.role == SourceRole::Supply).map(|x| x.node_plus.clone()).unwrap_or_default();
    // Supply bus.
    s.path(&[gp(14, 4), gp(22, 4), gp(30, 4)]);
    s.wire(gp(22, 2), gp(22, 4));
    s.junction(gp(22, 4));
    s.terminal(net, &supply, gp(22, 2), Direction::Up);
    // Input.
    s.wire(gp(6, 15), gp(10, 15));
    s.terminal(net, INPUT_NET, gp(6, 15), Direction::Left);
    // RC1, R1, R2.
    if let Some(i) = find(&supply, c1) {
        s.resistor(resistors[i], gp(14, 6), Direction::Down, &supply, Direction::Left);
        s.wire(gp(14, 4), gp(14, 6));
        s.path(&[gp(14, 10), gp(14, 12)]);
        placed[i] = true;
    }
    if let Some(i) = find(c1, b2) {
        s.wire(gp(14, 10), gp(17, 10));
        s.resistor(resistors[i], gp(17, 10), Direction::Right, c1, Direction::Up);
        s.path(&[gp(21, 10), gp(24, 10), gp(24, 15), gp(26, 15)]);
        s.junction(gp(14, 10));
        placed[i] = true;
    }
    if let Some(i) = find(b2, GROUND) {
        s.wire(gp(24, 15), gp(24, 16));
        s.resistor(resistors[i], gp(24, 16), Direction::Down, b2, Direction::Left);
        s.terminal(net, GROUND, gp(24, 20), Direction::Down);
        s.junction(gp(24, 15));
        placed[i] = true;
    }
    // RC2 and the output.
    if let Some(i) = find(&supply, OUTPUT_NET) {
        s.wire(gp(30, 4), gp(30, 6));
        s.resistor(resistors[i], gp(30, 6), Direction::Down, &supply, Direction::Right);
        placed[i] = true;
    }
    s.wire(gp(30, 10), gp(30, 12));
    s.wire(gp(30, 10), gp(38, 10));
    s.junction(gp(30, 10));
    if let Some(i) = find(OUTPUT_NET, GROUND) {
        s.resistor(resistors[i], gp(35, 10), Direction::Down, OUTPUT_NET, Direction::Right);
        s.terminal(net, GROUND, gp(35, 14), Direction::Down);
        s.junction(gp(35, 10));
        placed[i] = true;
    }
    s.terminal(net, OUTPUT_NET, gp(38, 10), Direction::Right);
    // Shared emitter and RE.
    s.path(&[gp(14, 18), gp(14, 24), gp(20, 24), gp(30, 24), gp(30, 18)]);
    if let Some(i) = find(e, GROUND) {
        s.resistor(resistors[i], gp(20, 24), Direction::Down, e, Direction::Right);
        s.terminal(net, GROUND, gp(20, 28), Direction::Down);
        s.junction(gp(20, 24));
        placed[i] = true;
    }
    spare_row(&mut s, net, &resistors, &placed);
    fit_height(&mut s);
    s
}

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

/// A resistance as an IEC 60062 RKM code: the letter (R, K, M, G) stands for the decimal point
/// and the multiplier (4K7, 100K, R47, 1M0, 2M2). Up to four significant digits are kept.
pub fn rkm(ohms: f64) -> String {
    if !ohms.is_finite() || ohms < 0.0 {
        return "?".into();
    }
    if ohms == 0.0 {
        return "0R".into();
    }
    let (scale, letter) = if ohms >= 1e9 {
        (1e9, 'G')
    } else if ohms >= 1e6 {
        (1e6, 'M')
    } else if ohms >= 1e3 {
        (1e3, 'K')
    } else {
        (1.0, 'R')
    };
    let mantissa = ohms / scale;
    // Four significant digits at most.
    let decimals = (3 - mantissa.log10().floor() as i32).clamp(0, 6) as usize;
    let text = format!("{mantissa:.decimals$}");
    let (int, frac) = match text.split_once('.') {
        Some((i, f)) => (i.to_string(), f.trim_end_matches('0').to_string()),
        None => (text.clone(), String::new()),
    };
    // 1000K after rounding → 1M0.
    if int.len() > 3 && letter != 'G' {
        return rkm((int.parse::<f64>().unwrap_or(1000.0)) * scale);
    }
    let int = if int == "0" { String::new() } else { int };
    let frac = if frac.is_empty() && letter != 'R' && int.len() == 1 { "0".to_string() } else { frac };
    format!("{int}{letter}{frac}")
}

/// A resistance in engineering notation with its unit: "4.7 kΩ", "100 kΩ", "470 Ω", "2.2 MΩ".
pub fn engineering_ohms(ohms: f64) -> String {
    if !ohms.is_finite() {
        return "?".into();
    }
    let (scale, prefix) = if ohms >= 1e9 {
        (1e9, "G")
    } else if ohms >= 1e6 {
        (1e6, "M")
    } else if ohms >= 1e3 {
        (1e3, "k")
    } else {
        (1.0, "")
    };
    format!("{} {prefix}Ω", crate::netlist::short_number(ohms / scale))
}

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
    use crate::catalog;
    use crate::topology::Circuit;

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
        assert_eq!(engineering_ohms(4700.0), "4.7 kΩ");
        assert_eq!(engineering_ohms(470.0), "470 Ω");
    }

    #[test]
    fn escaping_covers_markup_characters() {
        assert_eq!(xml_escape("<a & 'b'> \"c\"\u{1}"), "&lt;a &amp; &apos;b&apos;&gt; &quot;c&quot;");
    }

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
    fn check_connectivity(key: &str, layout: &SchematicLayout) {
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

    fn variants() -> Vec<(String, Topology)> {
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
