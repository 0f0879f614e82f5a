//! A plain netlist of a design: every resistor with its designator, nodes and value; the rails and
//! references as voltage sources; the signal source; and the active device as a behavioural
//! element with its pins. The SPICE export ([`crate::spice`]) and the schematic
//! ([`crate::schematic`]) are both made from it, so the drawing, the part list and the simulator
//! deck cannot disagree.
//!
//! Node names are SPICE-friendly lower-case words; `0` is ground (SPICE's reference node). The
//! circuit input net is always [`INPUT_NET`] and the output net [`OUTPUT_NET`].
//!
//! This module is plain data below the topologies: it imports no topology. Every topology
//! implements [`Netlisted`] at the end of its own module (the enum `Topology` dispatches to them),
//! building its netlist with [`NetBuilder`]; the helpers that need a topology's types (the
//! builder from a design's parameter list, the input's DC value, the reference network) live in
//! the topology layer (`topology::netlisting`, `topology::noninverting::reference_network`).
//! Resistor designators are handed in as [`PartDesignator`]s taken from the design's parameter
//! list (`Circuit::parameters`), so the netlist, the schematic and the tolerance tables share one
//! numbering.

use crate::device::{Comparator, Rail};
use crate::notation::{self, Unit};
use crate::schematic::sheet::SchematicLayout;
use serde::{Deserialize, Serialize};

/// SPICE's ground node.
pub const GROUND: &str = "0";
/// The circuit input net (after the signal source's own resistance, if any).
pub const INPUT_NET: &str = "in";
/// The net the signal source drives when it has a source resistance in series.
pub const SOURCE_NET: &str = "sig";
/// The circuit output net.
pub const OUTPUT_NET: &str = "out";
/// The positive supply net.
pub const SUPPLY_NET: &str = "vcc";
/// The negative supply net (used only when the negative rail is not 0 V).
pub const NEGATIVE_NET: &str = "vee";

/// Why a resistor is in the netlist.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ResistorRole {
    /// A part of the design's part list; its designator matches the design's parameter list.
    PartList,
    /// The signal source's own resistance (not a part to fit).
    SourceResistance,
    /// An external load on the output (not a part of the part list).
    Load,
}

/// One resistor between two nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetResistor {
    /// Designator: R1, R2… for parts; `RS` for the source resistance; `RLOAD` for an external load.
    pub designator: String,
    /// First node.
    pub node_a: String,
    /// Second node.
    pub node_b: String,
    /// Resistance, ohms.
    pub resistance_ohm: f64,
    /// Part, source resistance or external load.
    pub role: ResistorRole,
}

/// What a voltage source stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SourceRole {
    /// The positive supply rail.
    Supply,
    /// The negative supply rail.
    NegativeRail,
    /// A fixed reference voltage (reference IC, separate regulated rail).
    Reference,
    /// The rail a pull-up returns to, when it is not the supply.
    PullupRail,
    /// The signal (or, for a supply monitor, the monitored rail).
    Input,
    /// The drop between the monitored rail and a comparator supplied from it.
    Dropout,
}

/// An ideal DC voltage source: V(`node_plus`) − V(`node_minus`) = `volts`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetSource {
    /// Element name, starting with `V` (VCC, VEE, VREF, VPU, VIN…).
    pub name: String,
    /// Positive node.
    pub node_plus: String,
    /// Negative node.
    pub node_minus: String,
    /// Voltage, volts (for the input: the centre of the thresholds, the sweep goes around it).
    pub volts: f64,
    /// What the source stands for.
    pub role: SourceRole,
    /// Net label for the schematic (e.g. "VCC 5 V").
    pub label: String,
}

/// An ideal DC current source from `node_from` through the source to `node_to` (SPICE's
/// convention for `I n+ n- value`); used for input bias currents, which flow into the device pin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetCurrentSource {
    /// Element name, starting with `I`.
    pub name: String,
    /// The node the current leaves.
    pub node_from: String,
    /// The node the current enters.
    pub node_to: String,
    /// Current, amperes.
    pub amps: f64,
}

/// How a logic gate's input decides.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum GateThreshold {
    /// An ordinary input switching at one voltage VM.
    Single {
        /// Switching point, volts.
        switching_v: f64,
    },
    /// A Schmitt input with its own two thresholds.
    Schmitt {
        /// Input VT+ of the gate, volts.
        upper_v: f64,
        /// Input VT− of the gate, volts.
        lower_v: f64,
    },
}

/// The matched NPN transistor model of the two-transistor Schmitt trigger (transport
/// Ebers–Moll parameters; SPICE's bipolar model reduces to it with the other parameters at their defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NpnModel {
    /// Transport saturation current IS at the nominal temperature, amperes.
    pub saturation_current_a: f64,
    /// Forward current gain βF at the nominal temperature.
    pub beta_f: f64,
    /// Reverse current gain βR at the nominal temperature.
    pub beta_r: f64,
    /// Junction temperature, kelvin.
    pub temperature_k: f64,
    /// Nominal temperature at which IS, βF and βR hold (SPICE's TNOM), kelvin.
    pub nominal_temperature_k: f64,
    /// Temperature exponent of IS (SPICE's XTI).
    pub is_temperature_exponent: f64,
    /// Bandgap voltage of the IS(T) law (SPICE's EG), volts.
    pub bandgap_v: f64,
    /// Temperature exponent of βF and βR (SPICE's XTB).
    pub beta_temperature_exponent: f64,
    /// Zero-bias base–emitter junction capacitance (SPICE's CJE), farads; for transient runs only.
    pub emitter_capacitance_f: f64,
    /// Zero-bias base–collector junction capacitance (SPICE's CJC), farads; for transient runs only.
    pub collector_capacitance_f: f64,
    /// Forward transit time (SPICE's TF), seconds; for transient runs only.
    pub transit_time_s: f64,
    /// VBE of the hand model at the junction temperature, volts (stated in comments; SPICE
    /// computes its own).
    pub vbe_v: f64,
}

/// The active device, as a behavioural element with its pins.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ActiveDevice {
    /// A comparator or op-amp used open loop: output high when V(+) − V(−) rises above
    /// VOS + h/2, low when it falls below VOS − h/2 (DOMAIN §0).
    Comparator {
        /// Designator (U1).
        designator: String,
        /// Non-inverting input node (+).
        non_inverting: String,
        /// Inverting input node (−).
        inverting: String,
        /// Output node.
        output: String,
        /// Positive supply node.
        positive_supply: String,
        /// Negative supply node.
        negative_supply: String,
        /// How far the output high level sits below the positive supply node, volts; `None` for an
        /// open-drain/open-collector output, which only pulls low.
        output_high_drop_v: Option<f64>,
        /// How far the output low level sits above the negative supply node, volts.
        output_low_rise_v: f64,
        /// Input offset VOS, volts.
        offset_v: f64,
        /// Built-in hysteresis h, volts.
        hysteresis_v: f64,
        /// Output resistance while pulling low (open-drain RDS(on)), ohms; 0 for an ideal output.
        sink_resistance_ohm: f64,
    },
    /// A logic gate (buffer, inverter, Schmitt-input gate).
    LogicGate {
        /// Designator (U1).
        designator: String,
        /// Input node.
        input: String,
        /// Output node.
        output: String,
        /// Supply node.
        supply: String,
        /// Ground node.
        ground: String,
        /// How the input decides.
        threshold: GateThreshold,
        /// Whether the gate inverts.
        inverting: bool,
        /// Output high level, volts.
        output_high_v: f64,
        /// Output low level, volts.
        output_low_v: f64,
    },
    /// An NPN transistor.
    Npn {
        /// Designator (Q1, Q2).
        designator: String,
        /// Collector node.
        collector: String,
        /// Base node.
        base: String,
        /// Emitter node.
        emitter: String,
        /// Model parameters.
        model: NpnModel,
    },
}

impl ActiveDevice {
    /// The device's designator.
    pub fn designator(&self) -> &str {
        match self {
            ActiveDevice::Comparator { designator, .. }
            | ActiveDevice::LogicGate { designator, .. }
            | ActiveDevice::Npn { designator, .. } => designator,
        }
    }
}

/// A voltage regulator of a comparator's reference: a zener diode or an adjustable shunt
/// reference, with the values of the piecewise-linear model the analysis uses
/// (`topology::reference`), so the SPICE deck computes the same node voltage.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum NetRegulator {
    /// A zener diode, cathode to anode: Iz = max(0, (V(k) − V(a) − Vz0)/rz).
    Zener {
        /// Designator (D1).
        designator: String,
        /// Cathode node.
        cathode: String,
        /// Anode node.
        anode: String,
        /// Nominal zener voltage Vz at the test current, volts (for the part list and drawing).
        vz_v: f64,
        /// Source voltage Vz0 = Vz − Izt·rz of the model, volts.
        source_v: f64,
        /// Slope resistance rz, ohms.
        slope_ohm: f64,
    },
    /// An adjustable shunt reference: cathode current
    /// Ik = max(0, Ik,test + (V(ref) − V(a) − Vref)/Zka), Iref into the reference pin.
    Shunt {
        /// Designator (U2).
        designator: String,
        /// Cathode node.
        cathode: String,
        /// Anode node.
        anode: String,
        /// Reference-pin node.
        reference: String,
        /// Internal reference Vref, volts.
        vref_v: f64,
        /// Current into the reference pin, amperes.
        ref_current_a: f64,
        /// Dynamic impedance Zka, ohms.
        impedance_ohm: f64,
        /// Cathode current at which Vref holds, amperes.
        test_current_a: f64,
    },
}

impl NetRegulator {
    /// The regulator's designator.
    pub fn designator(&self) -> &str {
        match self {
            NetRegulator::Zener { designator, .. } | NetRegulator::Shunt { designator, .. } => designator,
        }
    }
}

/// The whole circuit as elements between named nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
pub struct Netlist {
    /// The topology's record name.
    pub topology: String,
    /// Resistors: the part list first, in the order of the design's parameter list, then any
    /// source resistance and external load.
    pub resistors: Vec<NetResistor>,
    /// Voltage sources: rails, references, the signal.
    pub sources: Vec<NetSource>,
    /// Current sources: the device's input bias currents (only those that are not zero).
    pub current_sources: Vec<NetCurrentSource>,
    /// Active devices.
    pub devices: Vec<ActiveDevice>,
    /// Reference regulators (zener, adjustable shunt reference).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub regulators: Vec<NetRegulator>,
}

impl Netlist {
    /// The schematic label of a node: "IN", "OUT", a source's label, or the node name in capitals.
    pub fn net_label(&self, node: &str) -> String {
        if node == INPUT_NET || node == SOURCE_NET {
            return "IN".into();
        }
        if node == OUTPUT_NET {
            return "OUT".into();
        }
        if node == GROUND {
            return "0 V".into();
        }
        self.sources
            .iter()
            .find(|s| {
                (s.node_plus == node && s.role != SourceRole::Input && s.role != SourceRole::Dropout)
                    || (s.node_minus == node && s.role == SourceRole::Dropout)
            })
            .map(|s| s.label.clone())
            .unwrap_or_else(|| node.to_uppercase())
    }

    /// The voltage of a node held by a source to ground, volts, if it is one.
    pub fn fixed_node_v(&self, node: &str) -> Option<f64> {
        if node == GROUND {
            return Some(0.0);
        }
        self.sources
            .iter()
            .find(|s| s.node_plus == node && s.node_minus == GROUND && s.role != SourceRole::Input)
            .map(|s| s.volts)
    }

    /// The part-list resistors only.
    pub fn part_list(&self) -> impl Iterator<Item = &NetResistor> {
        self.resistors.iter().filter(|r| r.role == ResistorRole::PartList)
    }
}

/// Anything that can be drawn and exported: its netlist and its schematic placement.
pub trait Netlisted {
    /// The circuit as a netlist, with designators matching the design's parameter list.
    fn netlist(&self) -> Netlist;
    /// Where the parts, wires and net labels go on the schematic grid.
    fn schematic(&self) -> SchematicLayout;
}

// `impl Netlisted for Topology` is generated with the enum by `topologies!` (core/src/topology/mod.rs),
// so a new topology is registered in one list.

/// A part-list resistor's parameter id and designator (`rf_ohm` → `R3`), as the design's
/// parameter list names it; a [`NetBuilder`] is given them in that list's order.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PartDesignator {
    /// The parameter id (`rf_ohm`).
    pub id: String,
    /// The designator (`R3`).
    pub designator: String,
}

/// Builds a netlist step by step; used by the topology modules' [`Netlisted`] implementations.
#[derive(Debug)]
pub struct NetBuilder {
    net: Netlist,
    parts: Vec<PartDesignator>,
}

impl NetBuilder {
    /// Starts a netlist for the topology named `topology` (its record name); `parts` are its
    /// part-list resistors in parameter order, where designators are looked up by parameter id.
    pub fn new(topology: &str, parts: Vec<PartDesignator>) -> Self {
        NetBuilder { net: Netlist { topology: topology.into(), ..Netlist::default() }, parts }
    }

    /// The designator of the resistor parameter `id` (e.g. `rf_ohm` → `R3`); the id in capitals
    /// if the circuit does not list it (never expected; a test checks every topology).
    pub fn designator(&self, id: &str) -> String {
        self.parts
            .iter()
            .find(|p| p.id == id)
            .map(|p| p.designator.clone())
            .unwrap_or_else(|| id.trim_end_matches("_ohm").to_uppercase())
    }

    /// Adds a part-list resistor by parameter id.
    pub fn part(&mut self, id: &str, node_a: &str, node_b: &str, resistance_ohm: f64) -> &mut Self {
        let designator = self.designator(id);
        self.resistor(designator, node_a, node_b, resistance_ohm, ResistorRole::PartList)
    }

    /// Adds any resistor.
    pub fn resistor(
        &mut self,
        designator: String,
        node_a: &str,
        node_b: &str,
        resistance_ohm: f64,
        role: ResistorRole,
    ) -> &mut Self {
        self.net.resistors.push(NetResistor {
            designator,
            node_a: node_a.into(),
            node_b: node_b.into(),
            resistance_ohm,
            role,
        });
        self
    }

    /// Adds a voltage source to ground, unless one with the same name exists. Returns the node.
    pub fn source(&mut self, name: &str, node: &str, volts: f64, role: SourceRole, label: String) -> String {
        if !self.net.sources.iter().any(|s| s.name == name) {
            self.net.sources.push(NetSource {
                name: name.into(),
                node_plus: node.into(),
                node_minus: GROUND.into(),
                volts,
                role,
                label,
            });
        }
        node.into()
    }

    /// Adds a source between two nodes (for a dropout).
    pub fn source_between(
        &mut self,
        name: &str,
        node_plus: &str,
        node_minus: &str,
        volts: f64,
        role: SourceRole,
        label: String,
    ) {
        self.net.sources.push(NetSource {
            name: name.into(),
            node_plus: node_plus.into(),
            node_minus: node_minus.into(),
            volts,
            role,
            label,
        });
    }

    /// The positive supply: source VCC on net `vcc`. `label` is e.g. "VCC" or "VDD".
    pub fn supply(&mut self, supply_v: f64, label: &str) -> String {
        self.source("VCC", SUPPLY_NET, supply_v, SourceRole::Supply, format!("{label} {}", volts_text(supply_v)))
    }

    /// The negative rail: ground when it is 0 V, else source VEE on net `vee`.
    pub fn negative(&mut self, negative_v: f64) -> String {
        if negative_v == 0.0 {
            GROUND.into()
        } else {
            self.source(
                "VEE",
                NEGATIVE_NET,
                negative_v,
                SourceRole::NegativeRail,
                format!("VEE {}", volts_text(negative_v)),
            )
        }
    }

    /// The node of a rail for a comparator on `supply_v`/`negative_v`; a fixed rail becomes a
    /// source named `name` on node `node`.
    pub fn rail(
        &mut self,
        rail: Rail,
        supply_v: f64,
        negative_v: f64,
        name: &str,
        node: &str,
        role: SourceRole,
    ) -> String {
        match rail {
            Rail::Supply => self.supply(supply_v, "VCC"),
            Rail::Ground => GROUND.into(),
            Rail::NegativeRail => self.negative(negative_v),
            Rail::Fixed(0.0) => GROUND.into(),
            Rail::Fixed(v) => self.source(name, node, v, role, format!("{name} {}", volts_text(v))),
        }
    }

    /// The signal source VIN, with the source resistance RS in series when it is above zero.
    /// `volts` is the DC value (the centre of the band, where the sweep is centred).
    pub fn input(&mut self, volts: f64, source_resistance_ohm: f64, label: &str) {
        if source_resistance_ohm > 0.0 {
            self.source("VIN", SOURCE_NET, volts, SourceRole::Input, label.into());
            self.resistor("RS".into(), SOURCE_NET, INPUT_NET, source_resistance_ohm, ResistorRole::SourceResistance);
        } else {
            self.source("VIN", INPUT_NET, volts, SourceRole::Input, label.into());
        }
    }

    /// Adds the comparator U1 from a [`Comparator`]'s applied (switched-on) effects, with its
    /// bias currents as current sources into the pins.
    #[allow(clippy::too_many_arguments)]
    pub fn comparator(
        &mut self,
        device: &Comparator,
        non_inverting: &str,
        inverting: &str,
        positive_supply: &str,
        negative_supply: &str,
        open_drain: bool,
        sink_resistance_ohm: f64,
    ) {
        let high_drop = device.supply_v - device.output_high_v();
        let low_rise = device.output_low_v() - device.negative_rail_v;
        let hysteresis_v = device.switching_offset_v(false) - device.switching_offset_v(true);
        self.net.devices.push(ActiveDevice::Comparator {
            designator: "U1".into(),
            non_inverting: non_inverting.into(),
            inverting: inverting.into(),
            output: OUTPUT_NET.into(),
            positive_supply: positive_supply.into(),
            negative_supply: negative_supply.into(),
            output_high_drop_v: (!open_drain).then_some(high_drop),
            output_low_rise_v: low_rise,
            offset_v: device.offset_applied_v(),
            hysteresis_v,
            sink_resistance_ohm,
        });
        self.bias("IBP", non_inverting, device.bias_plus_applied_a());
        self.bias("IBN", inverting, device.bias_minus_applied_a());
    }

    /// Adds an input bias current into `pin` (from the pin node to ground), if it is not zero.
    pub fn bias(&mut self, name: &str, pin: &str, amps: f64) {
        if amps != 0.0 && pin != GROUND {
            self.net.current_sources.push(NetCurrentSource {
                name: name.into(),
                node_from: pin.into(),
                node_to: GROUND.into(),
                amps,
            });
        }
    }

    /// Adds a reference regulator.
    pub fn regulator(&mut self, regulator: NetRegulator) {
        self.net.regulators.push(regulator);
    }

    /// Adds any active device.
    pub fn device(&mut self, device: ActiveDevice) {
        self.net.devices.push(device);
    }

    /// The finished netlist; part-list resistors first in parameter order.
    pub fn finish(mut self) -> Netlist {
        let order = |r: &NetResistor| -> (usize, usize) {
            match r.role {
                ResistorRole::PartList => (
                    0,
                    self.parts.iter().position(|p| p.designator == r.designator).unwrap_or(usize::MAX),
                ),
                ResistorRole::SourceResistance => (1, 0),
                ResistorRole::Load => (2, 0),
            }
        };
        let mut keyed: Vec<((usize, usize), NetResistor)> =
            self.net.resistors.drain(..).map(|r| (order(&r), r)).collect();
        keyed.sort_by_key(|(k, _)| *k);
        self.net.resistors = keyed.into_iter().map(|(_, r)| r).collect();
        self.net
    }
}

/// Significant digits of a voltage in a net label.
pub const LABEL_DIGITS: u8 = 4;

/// A voltage as net-label text through [`notation::format_with_unit`] with [`LABEL_DIGITS`]
/// significant digits: "5 V", "3.3 V", "-12 V", "2.5 V", "200 mV".
pub fn volts_text(v: f64) -> String {
    notation::format_with_unit(v, LABEL_DIGITS, Unit::Volt)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn volts_labels() {
        assert_eq!(volts_text(5.0), "5 V");
        assert_eq!(volts_text(3.3), "3.3 V");
        assert_eq!(volts_text(-12.0), "-12 V");
        assert_eq!(volts_text(1.23456), "1.235 V");
        assert_eq!(volts_text(0.2), "200 mV");
        assert_eq!(volts_text(0.0), "0 V");
    }

    #[test]
    fn part_list_resistors_come_first_in_parameter_order_with_their_designators() {
        let parts = ["ra_ohm", "rb_ohm", "rf_ohm"]
            .iter()
            .zip(["R1", "R2", "R3"])
            .map(|(id, d)| PartDesignator { id: id.to_string(), designator: d.to_string() })
            .collect();
        let mut b = NetBuilder::new("toy", parts);
        b.resistor("RLOAD".into(), OUTPUT_NET, GROUND, 10e3, ResistorRole::Load);
        b.part("rf_ohm", OUTPUT_NET, "p", 100e3);
        b.input(1.0, 50.0, "IN");
        b.part("ra_ohm", SUPPLY_NET, "p", 10e3);
        b.part("rx_ohm", "p", GROUND, 1e3);
        let net = b.finish();
        let order: Vec<&str> = net.resistors.iter().map(|r| r.designator.as_str()).collect();
        // Listed parts in parameter order, an unlisted id (in capitals) after them, then RS and RLOAD.
        assert_eq!(order, ["R1", "R3", "RX", "RS", "RLOAD"]);
        assert_eq!(net.part_list().count(), 3);
        assert_eq!(net.net_label(SOURCE_NET), "IN");
    }
}
