// Over 600 lines: the monitor model is one job; about a third of the file is unit tests and the netlist.
//! Battery / supply undervoltage or overvoltage monitor (shared/DOMAIN.md §1g).
//!
//! The circuit's input is the monitored rail VBAT: VBAT–Rtop–P–Rbot–0 V, hysteresis resistor Rh from
//! the comparator output to P, P on (+), a reference VREF on (−). A rising rail drives the output high.
//! Thresholds are referred to the monitored rail: VT+ is the rising-rail point V_rise and VT− the
//! falling-rail point V_fall. For undervoltage lockout V_fall is the trip (disconnect) and V_rise the
//! release (reconnect); for overvoltage lockout it is the other way round.
//!
//! With r = Rtop/Rh and G = 1 + Rtop/Rbot + r (Rtop including the rail's source resistance), the
//! comparator switches at P = VREF + VOS ± h/2 (DOMAIN §0), giving
//! V_fall = (VREF+VOS−h/2)·G − VOH·r + IB+·Rtop and V_rise = (VREF+VOS+h/2)·G − VOL·r + IB+·Rtop.
//! Variants (DOMAIN §1g): comparator supplied from the monitored rail (VOH = VBAT − Vdrop), which
//! gives V_fall = (P·G + Vdrop·r + IB+·Rtop)/(1+r); open-drain output with Rpu to Vpu, where
//! r′ = Rtop/(Rh+Rpu) replaces r for the high state. All are the same Thevenin-output form
//! VBAT = [P(1 + r_x + Rtop/Rbot) − β·r_x + IB+·Rtop]/(1 + α·r_x), with the output source
//! Vx = α·VBAT + β behind Rx and r_x = Rtop/(Rh + Rx).

use super::comparator::{pick_root, quadratic_roots, resistance, verified, Designators};
use super::comparator::bias_error_check_with;
use super::{Described, expect_len, Circuit, Parameter, ParameterKind};
use crate::analysis::{
    Analysis, OutputStage,
    CheckSettings, NodeVoltage, OperatingPoint, OutputState, ResistorDrop, Sense, Thresholds, Warning, WarningCode,
};
use crate::device::{Comparator, Rail};
use crate::error::{finite, non_negative, DesignError};
use serde::{Deserialize, Serialize};

/// Extra-low-voltage limit for d.c. used by the safety check: 60 V d.c. (IEC 62368-1 ES1 and the
/// older IEC 60950-1 SELV limit, from memory; DOMAIN §5).
pub const SAFETY_DC_LIMIT_V: f64 = 60.0;

/// What the monitor protects against; it only changes which threshold is called trip and which release.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum MonitorMode {
    /// Undervoltage lockout: trip at V_fall (disconnect the load), release at V_rise.
    #[default]
    Undervoltage,
    /// Overvoltage lockout: trip at V_rise (disconnect the source), release at V_fall.
    Overvoltage,
}

/// Where the comparator's own supply comes from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum MonitorSupply {
    /// A separate regulated rail: the device's `supply_v`.
    #[default]
    Separate,
    /// The monitored rail itself, through a dropout (a diode, a filter or a regulator in dropout):
    /// the comparator supply is VBAT − `dropout_v`, so VOH = VBAT − dropout − the device's headroom.
    FromMonitoredRail {
        /// Drop between the monitored rail and the comparator's supply pin, volts.
        dropout_v: f64,
    },
}

/// The comparator's output stage.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum MonitorOutput {
    /// Push-pull output: VOH and VOL of the device.
    #[default]
    PushPull,
    /// Open-drain output with a pull-up Rpu to `pullup_rail`; low level VOL of the device.
    OpenDrain {
        /// Pull-up resistor, ohms.
        rpu_ohm: f64,
        /// Rail the pull-up returns to (`supply` means the device's `supply_v`).
        pullup_rail: Rail,
    },
}

/// A supply monitor: divider Rtop/Rbot from the monitored rail, hysteresis resistor Rh, fixed VREF.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SupplyMonitor {
    /// Upper divider resistor Rtop from the monitored rail to node P, ohms.
    pub rtop_ohm: f64,
    /// Lower divider resistor Rbot from node P to 0 V, ohms.
    pub rbot_ohm: f64,
    /// Hysteresis resistor Rh from the comparator output to node P, ohms.
    pub rh_ohm: f64,
    /// Reference voltage on the inverting input, volts (a reference IC or the device's internal one).
    pub vref_v: f64,
    /// Undervoltage or overvoltage lockout.
    #[serde(default)]
    pub mode: MonitorMode,
    /// Where the comparator's supply comes from.
    #[serde(default)]
    pub comparator_supply: MonitorSupply,
    /// Push-pull or open-drain output.
    #[serde(default)]
    pub output: MonitorOutput,
    /// The comparator. `supply_v` is its separate supply; when it is supplied from the monitored rail,
    /// `supply_v` only sets its input range and the pull-up rail `supply` (the thresholds do not use it).
    /// `source_resistance_ohm` is the monitored rail's source resistance, in series with Rtop.
    pub device: Comparator,
}

/// The output as a source Vx = α·VBAT + β behind Rx: (α, β, Rx).
type OutSource = (f64, f64, f64);

impl SupplyMonitor {
    /// An undervoltage monitor with a push-pull comparator on its own supply.
    pub fn undervoltage(rtop_ohm: f64, rbot_ohm: f64, rh_ohm: f64, vref_v: f64, device: Comparator) -> Self {
        SupplyMonitor {
            rtop_ohm,
            rbot_ohm,
            rh_ohm,
            vref_v,
            mode: MonitorMode::Undervoltage,
            comparator_supply: MonitorSupply::Separate,
            output: MonitorOutput::PushPull,
            device,
        }
    }

    /// Rtop plus the monitored rail's source resistance.
    fn rte(&self) -> f64 {
        self.rtop_ohm + self.device.source_resistance_ohm
    }

    /// The drop from VBAT to VOH when self-supplied: dropout plus the device's output headroom.
    fn self_supply_drop(&self, dropout_v: f64) -> f64 {
        dropout_v + (self.device.supply_v - self.device.output_high_v())
    }

    fn vpu(&self, rail: Rail) -> f64 {
        rail.volts(self.device.supply_v, self.device.negative_rail_v)
    }

    /// The output source in a state.
    fn out_source(&self, high: bool) -> OutSource {
        if !high {
            return (0.0, self.device.output_low_v(), 0.0);
        }
        match (self.output, self.comparator_supply) {
            (MonitorOutput::OpenDrain { rpu_ohm, pullup_rail }, _) => (0.0, self.vpu(pullup_rail), rpu_ohm),
            (MonitorOutput::PushPull, MonitorSupply::Separate) => (0.0, self.device.output_high_v(), 0.0),
            (MonitorOutput::PushPull, MonitorSupply::FromMonitoredRail { dropout_v }) => {
                (1.0, -self.self_supply_drop(dropout_v), 0.0)
            }
        }
    }

    /// The comparator's switching level at P when leaving a state: VREF + VOS ∓ h/2.
    fn p_switch(&self, high: bool) -> f64 {
        self.vref_v + self.device.switching_offset_v(high)
    }

    /// Monitored-rail voltage at which the comparator leaves the given output state.
    fn switch_v(&self, high: bool) -> f64 {
        let (alpha, beta, rx) = self.out_source(high);
        let rte = self.rte();
        let rxr = rte / (self.rh_ohm + rx);
        let p = self.p_switch(high);
        (p * (1.0 + rxr + rte / self.rbot_ohm) - beta * rxr + self.device.bias_plus_applied_a() * rte)
            / (1.0 + alpha * rxr)
    }

    /// Node P and the output node for a rail voltage and a state (KCL at P).
    fn nodes(&self, vbat_v: f64, high: bool) -> (f64, f64) {
        let (alpha, beta, rx) = self.out_source(high);
        let vx = alpha * vbat_v + beta;
        let rhx = self.rh_ohm + rx;
        let rte = self.rte();
        let p = (vbat_v / rte + vx / rhx - self.device.bias_plus_applied_a())
            / (1.0 / rte + 1.0 / rhx + 1.0 / self.rbot_ohm);
        (p, vx + (p - vx) * rx / rhx)
    }

    /// (release, trip) in the mode's terms.
    fn trip_release(&self, t: &Thresholds) -> (f64, f64) {
        match self.mode {
            MonitorMode::Undervoltage => (t.vt_lower_v, t.vt_upper_v),
            MonitorMode::Overvoltage => (t.vt_upper_v, t.vt_lower_v),
        }
    }
}

impl Circuit for SupplyMonitor {
    super::comparator::comparator_rails!();

    fn validate(&self) -> Result<(), DesignError> {
        self.device.validate()?;
        resistance("rtop_ohm", self.rtop_ohm)?;
        resistance("rbot_ohm", self.rbot_ohm)?;
        resistance("rh_ohm", self.rh_ohm)?;
        finite("vref_v", self.vref_v)?;
        if self.vref_v <= self.device.negative_rail_v {
            return Err(DesignError::invalid("vref_v", "must be above the comparator's negative rail (0 V for a single supply)"));
        }
        if let MonitorSupply::FromMonitoredRail { dropout_v } = self.comparator_supply {
            non_negative("comparator_supply.dropout_v", dropout_v)?;
        }
        if let MonitorOutput::OpenDrain { rpu_ohm, pullup_rail } = self.output {
            resistance("output.rpu_ohm", rpu_ohm)?;
            pullup_rail.validate("output.pullup_rail")?;
            if self.vpu(pullup_rail) <= self.device.output_low_v() {
                return Err(DesignError::inconsistent(format!(
                    "the pull-up rail ({:.4} V) must be above the output low level ({:.4} V)",
                    self.vpu(pullup_rail),
                    self.device.output_low_v()
                )));
            }
        }
        Ok(())
    }

    fn thresholds(&self) -> Result<Thresholds, DesignError> {
        // Output low below the band: a rising rail leaves the low state at V_rise.
        Ok(Thresholds { vt_upper_v: self.switch_v(false), vt_lower_v: self.switch_v(true) })
    }

    /// The levels at the output node at the instant of switching (self-supplied: VBAT − drop at
    /// V_fall; open-drain: the pull-up sags through Rh).
    fn output_levels(&self) -> Result<(f64, f64), DesignError> {
        let hi = self.nodes(self.switch_v(true), true).1;
        Ok((hi, self.device.output_low_v()))
    }

    fn sense(&self) -> Sense {
        Sense::NonInverting
    }

    fn operating_point(&self, vin_v: f64, state: OutputState) -> Result<OperatingPoint, DesignError> {
        let high = state == OutputState::High;
        let (p, o) = self.nodes(vin_v, high);
        let i_top = (vin_v - p) / self.rte();
        let mut seq = Designators::default();
        let mut resistors = vec![
            ResistorDrop { designator: seq.next_name(), resistance_ohm: self.rtop_ohm, volts: i_top * self.rtop_ohm },
            ResistorDrop { designator: seq.next_name(), resistance_ohm: self.rbot_ohm, volts: p },
            ResistorDrop { designator: seq.next_name(), resistance_ohm: self.rh_ohm, volts: o - p },
        ];
        // The monitored rail feeds the divider continuously (DOMAIN §1g); the output or pull-up
        // sources the current into Rh.
        let mut sourced = i_top.max(0.0);
        if let MonitorOutput::OpenDrain { rpu_ohm, pullup_rail } = self.output {
            let vpu = self.vpu(pullup_rail);
            resistors.push(ResistorDrop { designator: seq.next_name(), resistance_ohm: rpu_ohm, volts: vpu - o });
            sourced += ((vpu - o) / rpu_ohm).max(0.0);
        } else {
            sourced += ((o - p) / self.rh_ohm).max(0.0);
        }
        Ok(OperatingPoint {
            resistors,
            input_current_a: i_top,
            network_current_a: sourced,
            device_inputs: vec![
                NodeVoltage { name: "non-inverting input (node P)".into(), volts: p },
                NodeVoltage { name: "inverting input (VREF)".into(), volts: self.vref_v },
            ],
        })
    }

    fn parameters(&self) -> Vec<Parameter> {
        let mut seq = Designators::default();
        let mut v = vec![
            Parameter::resistor("rtop_ohm", &seq.next_name(), "divider resistor from the monitored rail", self.rtop_ohm),
            Parameter::resistor("rbot_ohm", &seq.next_name(), "divider resistor to 0 V", self.rbot_ohm),
            Parameter::resistor("rh_ohm", &seq.next_name(), "hysteresis resistor", self.rh_ohm),
        ];
        if let MonitorOutput::OpenDrain { rpu_ohm, .. } = self.output {
            v.push(Parameter::resistor("rpu_ohm", &seq.next_name(), "pull-up resistor", rpu_ohm));
        }
        let d = &self.device;
        v.push(Parameter::quantity("supply_v", "comparator supply", d.supply_v, ParameterKind::Supply));
        v.push(Parameter::quantity("negative_rail_v", "negative rail", d.negative_rail_v, ParameterKind::Supply));
        v.push(Parameter::quantity("vref_v", "reference VREF", self.vref_v, ParameterKind::Reference));
        if let MonitorOutput::OpenDrain { pullup_rail: Rail::Fixed(x), .. } = self.output {
            v.push(Parameter::quantity("pullup_v", "pull-up rail", x, ParameterKind::Supply));
        }
        if let MonitorSupply::FromMonitoredRail { dropout_v } = self.comparator_supply {
            v.push(Parameter::quantity("dropout_v", "supply dropout", dropout_v, ParameterKind::OutputLevel));
        }
        if self.output == MonitorOutput::PushPull {
            v.push(Parameter::quantity("output_high_drop_v", "VCC − VOH", d.output_high_drop_v, ParameterKind::OutputLevel));
        }
        v.push(Parameter::quantity("output_low_rise_v", "VOL − VEE", d.output_low_rise_v, ParameterKind::OutputLevel));
        v.push(super::comparator::offset_parameter(d));
        v.push(super::comparator::bias_parameter("bias_plus_a", "bias current IB+", d.bias_plus_a, d));
        v.push(super::comparator::builtin_hysteresis_parameter(d));
        v
    }

    fn with_parameters(&self, values: &[f64]) -> Result<Self, DesignError> {
        let mut c = self.clone();
        self.with_parameters_into(values, &mut c)?;
        Ok(c)
    }

    fn with_parameters_into(&self, values: &[f64], c: &mut Self) -> Result<(), DesignError> {
        let open = matches!(self.output, MonitorOutput::OpenDrain { .. });
        let fixed_pu = matches!(self.output, MonitorOutput::OpenDrain { pullup_rail: Rail::Fixed(_), .. });
        let selfs = matches!(self.comparator_supply, MonitorSupply::FromMonitoredRail { .. });
        let n = 3 + open as usize + 3 + fixed_pu as usize + selfs as usize + (!open) as usize + 4;
        expect_len(values, n)?;
        let mut it = values.iter().copied();
        let mut next = || it.next().unwrap_or(f64::NAN);
        c.clone_from(self);
        c.rtop_ohm = next();
        c.rbot_ohm = next();
        c.rh_ohm = next();
        if let MonitorOutput::OpenDrain { rpu_ohm, .. } = &mut c.output {
            *rpu_ohm = next();
        }
        c.device.supply_v = next();
        c.device.negative_rail_v = next();
        c.vref_v = next();
        if let MonitorOutput::OpenDrain { pullup_rail: rail @ Rail::Fixed(_), .. } = &mut c.output {
            *rail = Rail::Fixed(next());
        }
        if let MonitorSupply::FromMonitoredRail { dropout_v } = &mut c.comparator_supply {
            *dropout_v = next();
        }
        if !open {
            c.device.output_high_drop_v = next();
        }
        c.device.output_low_rise_v = next();
        c.device.offset_v = next();
        c.device.bias_plus_a = next();
        c.device.builtin_hysteresis_v = next();
        Ok(())
    }

    /// DOMAIN §1g synthesis (choose Rtop), with VOS, h and IB+·Rtop inverted exactly. With
    /// P± = VREF + VOS ∓ h/2, A = (P+/P−)(V_rise − IB+·Rtop) − (V_fall − IB+·Rtop):
    /// push-pull r = [P+(V_rise − IB+Rtop) − P−(V_fall − IB+Rtop)]/[P−·VOH(V_fall) − P+·VOL];
    /// open-drain r is the positive root of B·Rpu·r² + (B + C − A·Rpu/Rtop)·Rtop·r − A·Rtop = 0 with
    /// B = P+(P− − VOL)/P−, C = Vpu − P+ (DOMAIN's quadratic in Rh without offsets);
    /// then Rh = Rtop/r, q = (V_rise − IB+Rtop + r·VOL)/P− − 1 − r, Rbot = Rtop/q.
    fn synthesise_with_anchor(&self, targets: Thresholds, rtop_ohm: f64) -> Result<Self, DesignError> {
        self.validate()?;
        resistance("anchor_ohm", rtop_ohm)?;
        let (rise, fall) = (targets.vt_upper_v, targets.vt_lower_v);
        if !(rise.is_finite() && fall.is_finite()) {
            return Err(DesignError::invalid("targets", "V_rise and V_fall must be finite numbers"));
        }
        if rise <= fall {
            return Err(DesignError::infeasible(
                format!("the rising-rail point ({rise:.4} V) must be above the falling-rail point ({fall:.4} V)"),
                "swap the targets: VT+ is the point a rising rail crosses, VT− the point a falling rail crosses",
            ));
        }
        let d = &self.device;
        let rte = rtop_ohm + d.source_resistance_ohm;
        let pl = self.p_switch(false);
        let ph = self.p_switch(true);
        if !(pl > 0.0 && ph > 0.0) {
            return Err(DesignError::infeasible(
                format!("the comparator would switch at {ph:.4} V / {pl:.4} V at node P, not above 0 V"),
                "check VREF, the offset and the built-in hysteresis",
            ));
        }
        let ibt = d.bias_plus_applied_a() * rte;
        let (al, ah) = (rise - ibt, fall - ibt);
        let vol = d.output_low_v();
        let (alpha, beta, rx) = self.out_source(true);
        let r = if rx > 0.0 {
            let a_coef = (ph / pl) * al - ah;
            let b_coef = ph * (pl - vol) / pl;
            let c_coef = beta - ph;
            let hint = a_coef / (b_coef + c_coef);
            let roots = quadratic_roots(b_coef * rx, (b_coef + c_coef) * rte - a_coef * rx, -a_coef * rte);
            pick_root(roots, hint, |r| r > 0.0).ok_or_else(|| {
                DesignError::infeasible(
                    format!("no hysteresis resistor reaches a band of {:.4} V with this pull-up", rise - fall),
                    "narrow the band, lower the pull-up resistor, or raise the pull-up rail",
                )
            })?
        } else {
            let voh_at_trip = beta + alpha * fall;
            let den = pl * voh_at_trip - ph * vol;
            if voh_at_trip.is_nan() || voh_at_trip <= vol || den.is_nan() || den <= 0.0 {
                return Err(DesignError::infeasible(
                    format!("the output high level at the trip point ({voh_at_trip:.4} V) is not above the low level ({vol:.4} V)"),
                    "lower the supply dropout or raise the falling-rail point",
                ));
            }
            let r = (ph * al - pl * ah) / den;
            if r.is_nan() || r <= 0.0 {
                return Err(DesignError::infeasible(
                    format!(
                        "the device's built-in hysteresis already gives more than the requested band ({:.4} V)",
                        rise - fall
                    ),
                    "widen the band or use a device without built-in hysteresis",
                ));
            }
            r
        };
        let q = (al + r * vol) / pl - 1.0 - r;
        if q.is_nan() || q <= 0.0 {
            return Err(DesignError::infeasible(
                format!(
                    "the rising-rail point ({rise:.4} V) is too low for this reference: it must exceed VREF + r(VREF − VOL) ≈ {:.4} V",
                    pl + r * (pl - vol) + ibt
                ),
                "raise the thresholds, or use a lower reference voltage",
            ));
        }
        let mut out = self.clone();
        out.rtop_ohm = rtop_ohm;
        out.rh_ohm = rte / r;
        out.rbot_ohm = rte / q;
        verified(out, targets, rtop_ohm)
    }

    fn anchor_description(&self) -> &'static str {
        "divider resistor Rtop (monitored rail to the sense node); a pull-up is kept"
    }

    /// The comparator's supply moves; the monitored rail is the input, not a supply.
    fn checks(&self, settings: &CheckSettings) -> Vec<Warning> {
        let mut w = Vec::new();
        let Ok(t) = self.thresholds() else { return w };
        let (trip, release) = self.trip_release(&t);
        let band = t.hysteresis_v();
        // DOMAIN §6 (battery disconnect, common practice): the release point must clear the voltage the
        // rail recovers to once the load is removed, or the load cycles.
        if settings.expected_recovery_v > 0.0 && band < settings.expected_recovery_v {
            let (what, load) = match self.mode {
                MonitorMode::Undervoltage => ("recovers", "load"),
                MonitorMode::Overvoltage => ("falls back", "source"),
            };
            w.push(Warning::new(
                WarningCode::ReleaseTooClose,
                format!(
                    "release ({release:.3} V) is only {:.0} mV from the trip point ({trip:.3} V), less than the {:.0} mV the rail {what} once the {load} is disconnected: the {load} will reconnect and disconnect repeatedly; widen the band to more than the recovery plus tolerances",
                    band * 1e3,
                    settings.expected_recovery_v * 1e3
                ),
            ));
        }
        // DOMAIN §6: divider current 20–100× the input bias current (common practice).
        let ib = self.device.bias_plus_applied_a().abs();
        let i_div = t.vt_lower_v / (self.rte() + self.rbot_ohm);
        if ib > 0.0 && i_div < settings.divider_current_ratio * ib {
            w.push(Warning::new(
                WarningCode::DividerCurrentLow,
                format!(
                    "divider current at the falling-rail point {:.3} µA is less than {:.0}× the input bias current {:.3} µA (common practice: 20–100×): lower Rtop and Rbot, and add a capacitor across Rbot if they must stay high",
                    i_div * 1e6,
                    settings.divider_current_ratio,
                    ib * 1e6
                ),
            ));
        }
        let mut nb = self.clone();
        nb.device.effects.bias_current = false;
        bias_error_check_with(self, &nb, settings, &mut w);
        // DOMAIN §5: strings can exceed extra-low voltage.
        let mut top = t.vt_upper_v.max(t.vt_lower_v);
        if let Some(m) = settings.input_max_v {
            top = top.max(m);
        }
        if top > SAFETY_DC_LIMIT_V {
            w.push(Warning::new(
                WarningCode::Safety,
                format!(
                    "the monitored rail reaches {top:.1} V, above {SAFETY_DC_LIMIT_V:.0} V d.c. (the extra-low-voltage limit of IEC 62368-1 ES1, from memory): rate Rtop and its spacing for the full pack voltage plus transients, fuse or limit the sense lead where it leaves the pack, guard against reverse polarity; a shorted Rtop puts the full rail on the comparator input. Follow local codes and licensed practice"
                ),
            ));
        }
        w
    }

    fn output_stage(&self) -> OutputStage {
        match self.output {
            MonitorOutput::PushPull => OutputStage::PushPull,
            MonitorOutput::OpenDrain { .. } => OutputStage::OpenDrain,
        }
    }

    fn input_name(&self) -> &'static str {
        "monitored rail"
    }

    fn bench_supply_name(&self) -> Option<&'static str> {
        (self.comparator_supply == MonitorSupply::Separate).then_some("separate supply for the comparator")
    }

    fn bench_cautions(&self) -> Vec<String> {
        vec!["do the ramps with a current-limited bench supply in place of the battery; on the real battery, fuse the sense lead where it leaves the battery".into()]
    }

    fn troubleshooting(&self, _analysis: &Analysis, checks: &CheckSettings) -> Vec<String> {
        let (trip, release) = match self.mode {
            MonitorMode::Undervoltage => ("VT− (trip)", "VT+ (release)"),
            MonitorMode::Overvoltage => ("VT+ (trip)", "VT− (release)"),
        };
        let mut t = vec![
            format!("Here the readings are {trip} and {release} of the monitored rail."),
            "Measure the rail with the load connected and disconnected: when the load drops off the rail recovers, and the release point must lie above the recovered voltage or the load cycles on and off.".into(),
        ];
        if checks.expected_recovery_v > 0.0 {
            t.push(format!(
                "The design expects a recovery of {:.3} V; check it on the real battery.",
                checks.expected_recovery_v
            ));
        }
        t.push("Readings high by the same factor: the reference voltage is off (its error is multiplied by the divider ratio); measure VREF directly.".into());
        t.push("With megohm dividers, the meter's own input resistance (often 10 MΩ) loads node P: measure the rail, not node P.".into());
        t
    }
}

impl Described for SupplyMonitor {
    const TITLE: &'static str = "Supply or battery monitor (lockout)";
    const NOTE: &'static str = "Undervoltage or overvoltage lockout of a rail: input divider, reference and hysteresis resistor, with trip and release referred to the monitored rail.";
    const TEMPLATE_JSON: &'static str = include_str!("../catalog/supply_monitor.json");
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{ImpedanceChoice, Targets};
    use crate::topology::{analyse, synthesise};

    fn real_device() -> Comparator {
        Comparator {
            supply_v: 5.0,
            output_high_drop_v: 0.05,
            output_low_rise_v: 0.05,
            offset_v: 0.002,
            bias_plus_a: 5e-9,
            builtin_hysteresis_v: 0.003,
            source_resistance_ohm: 20.0,
            ..Comparator::default()
        }
    }

    #[test]
    fn push_pull_closed_form() {
        // DOMAIN §1g: r = Rtop/Rh, G = 1 + Rtop/Rbot + r; V_fall = VREF·G − VOH·r, V_rise = VREF·G − VOL·r.
        let (rt, rb, rh, vref) = (100e3, 27e3, 1e6, 2.5);
        let c = SupplyMonitor::undervoltage(rt, rb, rh, vref, Comparator::ideal(5.0));
        let t = c.thresholds().unwrap();
        let r = rt / rh;
        let g = 1.0 + rt / rb + r;
        assert!((t.vt_lower_v - (vref * g - 5.0 * r)).abs() < 1e-12);
        assert!((t.vt_upper_v - vref * g).abs() < 1e-12);
    }

    #[test]
    fn nonidealities_follow_domain() {
        // DOMAIN §1g: VREF and VOS errors are multiplied by G; add IB+·Rtop; h adds h·G to the band.
        let d = real_device();
        let c = SupplyMonitor::undervoltage(100e3, 27e3, 1e6, 2.5, d);
        let t = c.thresholds().unwrap();
        let rte = 100e3 + 20.0;
        let r = rte / 1e6;
        let g = 1.0 + rte / 27e3 + r;
        let fall = (2.5 + 0.002 - 0.0015) * g - 4.95 * r + 5e-9 * rte;
        let rise = (2.5 + 0.002 + 0.0015) * g - 0.05 * r + 5e-9 * rte;
        assert!((t.vt_lower_v - fall).abs() < 1e-12);
        assert!((t.vt_upper_v - rise).abs() < 1e-12);
    }

    #[test]
    fn self_supplied_closed_form() {
        // DOMAIN §1g: supplied from the monitored rail, V_fall = (VREF·G + Vdrop·r)/(1+r).
        let (rt, rb, rh, vref, drop) = (100e3, 27e3, 1e6, 2.5, 0.7);
        let mut c = SupplyMonitor::undervoltage(rt, rb, rh, vref, Comparator::ideal(12.0));
        c.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: drop };
        let t = c.thresholds().unwrap();
        let r = rt / rh;
        let g = 1.0 + rt / rb + r;
        assert!((t.vt_lower_v - (vref * g + drop * r) / (1.0 + r)).abs() < 1e-12);
        let (hi, _) = c.output_levels().unwrap();
        assert!((hi - (t.vt_lower_v - drop)).abs() < 1e-12);
    }

    #[test]
    fn open_drain_closed_form() {
        // DOMAIN §1g: V_fall = VREF(1 + Rtop/Rbot + r′) − Vpu·r′, r′ = Rtop/(Rh+Rpu); V_rise as push-pull.
        let (rt, rb, rh, rpu, vref, vpu) = (100e3, 27e3, 1e6, 10e3, 2.5, 5.0);
        let mut c = SupplyMonitor::undervoltage(rt, rb, rh, vref, Comparator::ideal(5.0));
        c.output = MonitorOutput::OpenDrain { rpu_ohm: rpu, pullup_rail: Rail::Fixed(vpu) };
        let t = c.thresholds().unwrap();
        let rp = rt / (rh + rpu);
        assert!((t.vt_lower_v - (vref * (1.0 + rt / rb + rp) - vpu * rp)).abs() < 1e-12);
        assert!((t.vt_upper_v - vref * (1.0 + rt / rb + rt / rh)).abs() < 1e-12);
    }

    #[test]
    fn open_drain_synthesis_matches_the_domain_quadratic() {
        // DOMAIN §1g: Rh = positive root of (ΔV/Rtop)Rh² + [ΔV·Rpu/Rtop − (Vpu−VOL)]Rh − (VREF−VOL)Rpu = 0.
        let (rtop, rpu, vref, vpu) = (1e6, 10e3, 2.5, 5.0);
        let mut c = SupplyMonitor::undervoltage(1.0, 1.0, 1.0, vref, Comparator::ideal(5.0));
        c.output = MonitorOutput::OpenDrain { rpu_ohm: rpu, pullup_rail: Rail::Fixed(vpu) };
        let (rise, fall) = (12.7, 11.5);
        let d = c.synthesise_with_anchor(Thresholds { vt_upper_v: rise, vt_lower_v: fall }, rtop).unwrap();
        let dv = rise - fall;
        let (a, b, cc) = (dv / rtop, dv * rpu / rtop - vpu, -vref * rpu);
        let rh = (-b + (b * b - 4.0 * a * cc).sqrt()) / (2.0 * a);
        assert!((d.rh_ohm - rh).abs() < 1e-9 * rh);
        // q = (V_rise + r·VOL)/VREF − 1 − r, Rbot = Rtop/q.
        let r = rtop / rh;
        let q = rise / vref - 1.0 - r;
        assert!((d.rbot_ohm - rtop / q).abs() < 1e-9 * d.rbot_ohm);
    }

    #[test]
    fn round_trip_every_variant() {
        let supplies = [MonitorSupply::Separate, MonitorSupply::FromMonitoredRail { dropout_v: 0.3 }];
        let outputs = [MonitorOutput::PushPull, MonitorOutput::OpenDrain { rpu_ohm: 47e3, pullup_rail: Rail::Supply }];
        for s in supplies {
            for o in outputs {
                let mut c = SupplyMonitor::undervoltage(1.0, 1.0, 1.0, 1.2, real_device());
                c.comparator_supply = s;
                c.output = o;
                let targets = Targets { vt_upper_v: 12.7, vt_lower_v: 11.5, impedance: ImpedanceChoice::AnchorOhm(470e3) };
                let d = synthesise(&c, &targets).unwrap();
                let t = d.thresholds().unwrap();
                assert!((t.vt_upper_v - 12.7).abs() < 1e-9 * 12.7, "{s:?} {o:?} {t:?}");
                assert!((t.vt_lower_v - 11.5).abs() < 1e-9 * 11.5, "{s:?} {o:?} {t:?}");
                assert_eq!(d.rtop_ohm, 470e3);
                analyse(&d, &CheckSettings::default()).unwrap();
            }
        }
    }

    #[test]
    fn release_too_close_and_safety() {
        let c = SupplyMonitor::undervoltage(1.0, 1.0, 1.0, 2.5, Comparator::ideal(5.0));
        let d = c.synthesise_with_anchor(Thresholds { vt_upper_v: 11.8, vt_lower_v: 11.5 }, 1e6).unwrap();
        let settings = CheckSettings { expected_recovery_v: 0.4, ..CheckSettings::default() };
        let w = d.checks(&settings);
        let m = w.iter().find(|w| w.code == WarningCode::ReleaseTooClose).expect("release warning");
        assert!(m.message.contains("reconnect and disconnect repeatedly"), "{}", m.message);
        assert!(w.iter().all(|w| w.code != WarningCode::Safety));
        let wide = c.synthesise_with_anchor(Thresholds { vt_upper_v: 12.7, vt_lower_v: 11.5 }, 1e6).unwrap();
        assert!(wide.checks(&settings).iter().all(|w| w.code != WarningCode::ReleaseTooClose));
        let hv = c.synthesise_with_anchor(Thresholds { vt_upper_v: 58.0, vt_lower_v: 52.0 }, 1e6).unwrap();
        let s2 = CheckSettings { input_max_v: Some(64.0), ..CheckSettings::default() };
        let w = hv.checks(&s2);
        let s = w.iter().find(|w| w.code == WarningCode::Safety).expect("safety warning");
        assert!(s.message.contains("local codes"));
    }

    #[test]
    fn infeasible_targets_are_typed() {
        let c = SupplyMonitor::undervoltage(1.0, 1.0, 1.0, 2.5, Comparator::ideal(5.0));
        let th = |up, lo| Thresholds { vt_upper_v: up, vt_lower_v: lo };
        assert!(matches!(c.synthesise_with_anchor(th(11.0, 12.0), 1e5), Err(DesignError::Infeasible { .. })));
        // Release below VREF + r(VREF − VOL): q ≤ 0.
        let e = c.synthesise_with_anchor(th(3.0, 1.0), 1e5).unwrap_err();
        assert!(e.to_string().contains("lower reference"), "{e}");
        let mut s = c.clone();
        s.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: 12.0 };
        assert!(matches!(s.synthesise_with_anchor(th(12.7, 11.5), 1e5), Err(DesignError::Infeasible { .. })));
    }

    #[test]
    fn invalid_parts_are_typed_errors() {
        let mut c = SupplyMonitor::undervoltage(1e5, 0.0, 1e6, 2.5, Comparator::ideal(5.0));
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.rbot_ohm = 1e4;
        c.vref_v = -1.0;
        assert!(matches!(c.validate(), Err(DesignError::InvalidValue { .. })));
        c.vref_v = 2.5;
        c.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: f64::NAN };
        assert!(c.validate().is_err());
    }

    #[test]
    fn parameters_round_trip() {
        let mut c = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, real_device());
        c.output = MonitorOutput::OpenDrain { rpu_ohm: 10e3, pullup_rail: Rail::Fixed(3.3) };
        c.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: 0.2 };
        let p = c.parameters();
        let names: Vec<_> = p.iter().filter_map(|p| p.designator.clone()).collect();
        assert_eq!(names, ["R1", "R2", "R3", "R4"]);
        let v: Vec<f64> = p.iter().map(|p| p.value).collect();
        assert_eq!(c.with_parameters(&v).unwrap(), c);
        assert!(c.with_parameters(&v[1..]).is_err());
        let pp = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, real_device());
        let v: Vec<f64> = pp.parameters().iter().map(|p| p.value).collect();
        assert_eq!(pp.with_parameters(&v).unwrap(), pp);
    }

    #[test]
    fn supply_corners_move_the_comparator_supply_only() {
        // Self-supplied: the thresholds do not depend on the comparator's nominal supply field.
        let mut c = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, Comparator::ideal(12.0));
        c.comparator_supply = MonitorSupply::FromMonitoredRail { dropout_v: 0.2 };
        assert_eq!(c.with_supply(10.0).thresholds().unwrap(), c.thresholds().unwrap());
        // Separate push-pull: VOH follows the comparator's supply, so V_fall moves.
        let s = SupplyMonitor::undervoltage(1e5, 27e3, 1e6, 2.5, Comparator::ideal(5.0));
        assert!(s.with_supply(4.5).thresholds().unwrap().vt_lower_v > s.thresholds().unwrap().vt_lower_v);
    }
}

#[allow(clippy::items_after_test_module)]
impl crate::netlist::Netlisted for SupplyMonitor {
    /// The monitored rail is the input source VIN (its source resistance as RS); Rtop from it to
    /// node `p` on (+), Rbot to 0 V, Rh from the output; VREF on (−). A comparator supplied from the
    /// monitored rail gets its supply through the dropout source VDROP.
    fn netlist(&self) -> crate::netlist::Netlist {
        use crate::netlist::{volts_text, SourceRole, GROUND, INPUT_NET, OUTPUT_NET, SOURCE_NET};
        use super::netlisting::{builder, input_centre_v};
        let d = &self.device;
        let (vs, vn) = (d.supply_v, d.negative_rail_v);
        let mut b = builder("supply_monitor", self);
        b.input(input_centre_v(self, (vn, vs)), d.source_resistance_ohm, "IN");
        let positive = match self.comparator_supply {
            MonitorSupply::Separate => b.supply(vs, "VCC"),
            MonitorSupply::FromMonitoredRail { dropout_v } => {
                let rail = if d.source_resistance_ohm > 0.0 { SOURCE_NET } else { INPUT_NET };
                b.source_between("VDROP", rail, "vcc_u1", dropout_v, SourceRole::Dropout, format!("IN − {}", volts_text(dropout_v)));
                "vcc_u1".to_string()
            }
        };
        let vee = b.negative(vn);
        b.part("rtop_ohm", INPUT_NET, "p", self.rtop_ohm);
        b.part("rbot_ohm", "p", GROUND, self.rbot_ohm);
        b.part("rh_ohm", OUTPUT_NET, "p", self.rh_ohm);
        let vref = b.rail(Rail::Fixed(self.vref_v), vs, vn, "VREF", "ref", SourceRole::Reference);
        let open_drain = match self.output {
            MonitorOutput::OpenDrain { rpu_ohm, pullup_rail } => {
                let pu = b.rail(pullup_rail, vs, vn, "VPU", "pu", SourceRole::PullupRail);
                b.part("rpu_ohm", &pu, OUTPUT_NET, rpu_ohm);
                true
            }
            MonitorOutput::PushPull => false,
        };
        b.comparator(d, "p", &vref, &positive, &vee, open_drain, 0.0);
        b.finish()
    }

    fn schematic(&self) -> crate::schematic::sheet::SchematicLayout {
        crate::schematic::layout::auto_layout(&crate::netlist::Netlisted::netlist(self))
    }
}
