//! The placement of a netlist on the schematic grid: the automatic placement shared by the
//! comparator and gate topologies ([`auto_layout`]) and the two-transistor trigger's own
//! ([`bjt_layout`]). It reads only the netlist data ([`crate::netlist`]) and writes the sheet data
//! ([`super::sheet`]); each topology picks its placement in its own `impl Netlisted`.
//!
//! [`auto_layout`]: the device in the middle, the (+) or gate-input node with slots left (signal or
//! series resistor), up and down (resistors to rails), the feedback resistor over the top, the (−)
//! node below with a left and a down slot, and the output with a pull-up and a load. Parts that fit
//! no slot go to a spare row at the bottom with both ends labelled, so every part is always drawn.

use super::sheet::{
    gp, Direction, GridPoint, LabelKind, NetLabel, PartSymbol, PlacedPart, PlacedPin, SchematicLayout, Wire,
};
use crate::netlist::{
    ActiveDevice, GateThreshold, NetRegulator, NetResistor, Netlist, ResistorRole, SourceRole, GROUND, INPUT_NET,
    OUTPUT_NET, SOURCE_NET,
};

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
            // A zener or shunt reference on N goes down from it (the shunt's R1 and R2 beside it).
            let regulator = net.regulators.iter().find(|g| match g {
                NetRegulator::Zener { cathode, .. } | NetRegulator::Shunt { cathode, .. } => cathode == n_node,
            });
            let ref_pin = match regulator {
                Some(NetRegulator::Shunt { reference, .. }) => Some(reference.clone()),
                _ => None,
            };
            let mut mine: Vec<usize> = (0..resistors.len())
                .filter(|&i| {
                    !placed[i]
                        && touches(resistors[i], n_node)
                        && resistors[i].role == ResistorRole::PartList
                        && ref_pin.as_deref().is_none_or(|p| !touches(resistors[i], p))
                })
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
                if !down_used && regulator.is_none() && (o == GROUND || net.fixed_node_v(&o).is_some_and(|v| v <= 0.0)) {
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
            if let Some(g) = regulator {
                s.wire(n_at, gp(20, 24));
                place_regulator(&mut s, net, g, gp(20, 24));
                down_used = true;
                if let Some(pin_net) = &ref_pin {
                    // R1 from N to the right and down to the reference pin, R2 on to ground.
                    let r1 = resistors.iter().position(|r| touches(r, n_node) && touches(r, pin_net));
                    let r2 = resistors.iter().position(|r| touches(r, pin_net) && !touches(r, n_node));
                    if let (Some(i1), Some(i2)) = (r1, r2) {
                        s.wire(n_at, gp(25, 22));
                        s.resistor(resistors[i1], gp(25, 22), Direction::Down, n_node, Direction::Left);
                        s.wire(gp(22, 26), gp(25, 26));
                        s.resistor(resistors[i2], gp(25, 26), Direction::Right, pin_net, Direction::Down);
                        s.terminal(net, GROUND, gp(29, 26), Direction::Down);
                        s.junction(gp(25, 26));
                        s.junction(n_at);
                        placed[i1] = true;
                        placed[i2] = true;
                    }
                }
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
    for g in &net.regulators {
        if !s.parts.iter().any(|p| p.designator == g.designator()) {
            let at = gp(8, s.height + 1);
            let cathode = match g {
                NetRegulator::Zener { cathode, .. } | NetRegulator::Shunt { cathode, .. } => cathode.clone(),
            };
            place_regulator(&mut s, net, g, at);
            s.terminal(net, &cathode, at, Direction::Up);
            s.height += 7;
        }
    }
    fit_height(&mut s);
    s
}

/// Draws a zener or shunt reference downward from `at` (its cathode), the anode to its net.
fn place_regulator(s: &mut SchematicLayout, net: &Netlist, g: &NetRegulator, at: GridPoint) {
    let bottom = gp(at.x, at.y + 4);
    match g {
        NetRegulator::Zener { designator, cathode, anode, vz_v, .. } => {
            s.parts.push(PlacedPart {
                designator: designator.clone(),
                symbol: PartSymbol::Zener { voltage_v: *vz_v },
                at,
                direction: Direction::Down,
                text_side: Direction::Left,
                pins: vec![pin("k", at, cathode), pin("a", bottom, anode)],
            });
            s.terminal(net, anode, bottom, Direction::Down);
        }
        NetRegulator::Shunt { designator, cathode, anode, reference, vref_v, .. } => {
            // The drawn value is the programmed cathode voltage when the netlist's programming
            // resistors are found; else Vref.
            let r1 = net.resistors.iter().find(|r| touches(r, cathode) && touches(r, reference));
            let r2 = net.resistors.iter().find(|r| touches(r, reference) && !touches(r, cathode));
            let voltage_v = match (r1, r2) {
                (Some(a), Some(b)) => vref_v * (1.0 + a.resistance_ohm / b.resistance_ohm),
                _ => *vref_v,
            };
            s.parts.push(PlacedPart {
                designator: designator.clone(),
                symbol: PartSymbol::ShuntReference { voltage_v },
                at,
                direction: Direction::Down,
                text_side: Direction::Left,
                pins: vec![pin("k", at, cathode), pin("a", bottom, anode), pin("ref", gp(at.x + 2, at.y + 2), reference)],
            });
            s.terminal(net, anode, bottom, Direction::Down);
        }
    }
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
