//! The schematic sheet as plain data: grid points, placed parts with their pins and nets, wires,
//! junctions and net labels ([`SchematicLayout`]). The placement ([`super::layout`]) fills it from a
//! netlist; the drawing ([`super::svg`]) reads only this data. Nothing here knows a topology.

use serde::{Deserialize, Serialize};

/// A point of the schematic grid (one unit is `svg::GRID_PX` pixels in the drawing).
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
    /// A zener diode drawn downward, cathode at (0,0), anode at (0,4).
    Zener {
        /// Zener voltage, volts (drawn as its value).
        voltage_v: f64,
    },
    /// An adjustable shunt reference drawn downward: cathode at (0,0), anode at (0,4), reference
    /// pin at (2,2).
    ShuntReference {
        /// Programmed cathode voltage, volts (drawn as its value).
        voltage_v: f64,
    },
    /// A capacitor, four grid units between its pins like a resistor (the oscillator's and the
    /// debouncer's timing capacitors).
    Capacitor {
        /// Capacitance, farads (drawn as its value).
        capacitance_f: f64,
    },
    /// A diode (the input network's clamp diodes) drawn downward: cathode at (0,0), anode at (0,4).
    Diode {
        /// Forward drop, volts (drawn as the part list writes it, "Vf 300 mV").
        forward_v: f64,
    },
    /// A bidirectional TVS diode drawn downward between (0,0) and (0,4).
    Tvs {
        /// Reverse standoff voltage, volts (drawn as the part list writes it, "standoff 33 V").
        standoff_v: f64,
    },
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
