//! What the comparator topologies (inverting, non-inverting, open-drain, plain, supply monitor)
//! have in common: resistor checks, the reference at the (−) input, divider arithmetic, the
//! device's rails and the shared design checks. No topology module imports a sibling topology.

use super::{sensitivities, Circuit, Parameter, ParameterKind};
use crate::analysis::{CheckSettings, Thresholds, Warning, WarningCode};
use crate::device::Comparator;
use crate::error::DesignError;
use crate::notation::Unit;

pub use super::reference::Reference;

pub(crate) use super::resistance;

/// Two resistances in parallel, ohms, without overflow for huge values.
pub(crate) fn par2(a_ohm: f64, b_ohm: f64) -> f64 {
    1.0 / (1.0 / a_ohm + 1.0 / b_ohm)
}

/// The fraction Rb/(Ra+Rb) of a divider, without overflow for huge values.
pub(crate) fn divider_fraction(ra_ohm: f64, rb_ohm: f64) -> f64 {
    1.0 / (1.0 + ra_ohm / rb_ohm)
}

/// The last step of every synthesis: the design must pass its own validation and reproduce the
/// targets to 1e-9 (relative to the larger target, 1 mV floor); extreme anchors or targets that
/// leave the floating-point range or lose that accuracy give a typed error instead of a bad design.
pub(crate) fn verified<C: Circuit>(design: C, targets: Thresholds, anchor_ohm: f64) -> Result<C, DesignError> {
    let unusable = |why: String| {
        DesignError::infeasible(
            format!("with the anchor at {anchor_ohm:.4e} Ω the targets need {why}"),
            "choose an anchor resistance in the usual range (about 1 kΩ to 10 MΩ), or targets on the scale of the rails",
        )
    };
    if let Err(e) = design.validate() {
        return Err(unusable(format!("part values outside the usable range ({e})")));
    }
    let t = design.thresholds()?;
    let scale = targets.vt_upper_v.abs().max(targets.vt_lower_v.abs()).max(1e-3);
    let ok = |got: f64, want: f64| got.is_finite() && (got - want).abs() <= 1e-9 * scale;
    if ok(t.vt_upper_v, targets.vt_upper_v) && ok(t.vt_lower_v, targets.vt_lower_v) {
        Ok(design)
    } else {
        Err(unusable(format!(
            "part ratios beyond double-precision accuracy (reached {:.9} V / {:.9} V)",
            t.vt_upper_v, t.vt_lower_v
        )))
    }
}

/// Hands out designators R1, R2... in order over the fitted resistors.
#[derive(Debug, Default)]
pub(crate) struct Designators(u32);

impl Designators {
    /// The next designator.
    pub(crate) fn next_name(&mut self) -> String {
        self.0 += 1;
        format!("R{}", self.0)
    }
}

/// Real roots of a·x² + b·x + c = 0 without cancellation (q = −(b + sign(b)·√D)/2; roots q/a and
/// c/q; Press et al., *Numerical Recipes*, §5.6, from memory). A vanishing `a` gives the linear root.
pub(crate) fn quadratic_roots(a: f64, b: f64, c: f64) -> [Option<f64>; 2] {
    let scale = a.abs().max(b.abs()).max(c.abs());
    if !(scale.is_finite()) || scale == 0.0 {
        return [None, None];
    }
    let (a, b, c) = (a / scale, b / scale, c / scale);
    if a.abs() <= 1e-15 * b.abs() {
        if b == 0.0 {
            return [None, None];
        }
        return [Some(-c / b), None];
    }
    let d = b * b - 4.0 * a * c;
    if d < 0.0 {
        return [None, None];
    }
    let sq = d.sqrt();
    let q = -0.5 * (b + if b >= 0.0 { sq } else { -sq });
    if q == 0.0 {
        return [Some(0.0), None];
    }
    [Some(q / a), Some(c / q)]
}

/// The root that satisfies `ok`; with two such roots, the one nearer `hint`.
pub(crate) fn pick_root(roots: [Option<f64>; 2], hint: f64, ok: impl Fn(f64) -> bool) -> Option<f64> {
    let good: Vec<f64> = roots.iter().flatten().copied().filter(|x| x.is_finite() && ok(*x)).collect();
    match good.as_slice() {
        [] => None,
        [x] => Some(*x),
        [x, y, ..] => Some(if (x - hint).abs() <= (y - hint).abs() || !hint.is_finite() { *x } else { *y }),
    }
}

/// The input-referred switching point of a non-inverting stage: the input voltage at which node P
/// (fed by R1s from the input and by S from an output Thevenin source `vx_v`, drawing IB+) reaches
/// `p_v`. From KCL at P: Vin = P·(1 + R1s/S) − Vx·R1s/S + IB+·R1s (DOMAIN §1b, §1c).
pub(crate) fn noninverting_switch_v(p_v: f64, vx_v: f64, r1s_ohm: f64, s_ohm: f64, ib_plus_a: f64) -> f64 {
    let m = r1s_ohm / s_ohm;
    p_v * (1.0 + m) - vx_v * m + ib_plus_a * r1s_ohm
}

/// Number of device parameters [`push_device_parameters`] appends.
pub(crate) fn device_parameter_count(with_bias_minus: bool) -> usize {
    5 + with_bias_minus as usize
}

/// Appends the device quantities in a fixed order: VCC − VOH, VOL − VEE, VOS, IB+, [IB−], h.
pub(crate) fn push_device_parameters(d: &Comparator, with_bias_minus: bool, v: &mut Vec<Parameter>) {
    v.push(Parameter::quantity("output_high_drop_v", "VCC − VOH", d.output_high_drop_v, ParameterKind::OutputLevel));
    v.push(Parameter::quantity("output_low_rise_v", "VOL − VEE", d.output_low_rise_v, ParameterKind::OutputLevel));
    v.push(offset_parameter(d));
    v.push(bias_parameter("bias_plus_a", "bias current IB+", d.bias_plus_a, d));
    if with_bias_minus {
        v.push(bias_parameter("bias_minus_a", "bias current IB−", d.bias_minus_a, d));
    }
    v.push(builtin_hysteresis_parameter(d));
}

/// The offset VOS as a parameter, with the device's offset drift (sign unknown).
pub(crate) fn offset_parameter(d: &Comparator) -> Parameter {
    Parameter::quantity("offset_v", "input offset VOS", d.offset_v, ParameterKind::Offset).with_drift(d.offset_drift())
}

/// A bias current as a parameter, with the device's bias-current temperature dependence.
pub(crate) fn bias_parameter(id: &str, label: &str, value_a: f64, d: &Comparator) -> Parameter {
    Parameter::quantity(id, label, value_a, ParameterKind::BiasCurrent).with_drift(d.bias_drift())
}

/// The device's built-in hysteresis as a parameter. It is a switching property of the part that
/// varies from part to part, so it takes the device-threshold band (datasheets give it as
/// min/typ/max; ±10 % by default).
pub(crate) fn builtin_hysteresis_parameter(d: &Comparator) -> Parameter {
    Parameter { unit: Unit::Volt, ..Parameter::quantity("builtin_hysteresis_v", "built-in hysteresis h", d.builtin_hysteresis_v, ParameterKind::DeviceThreshold) }
}

/// Reads the device quantities back in the order of [`push_device_parameters`].
pub(crate) fn take_device_parameters(d: &mut Comparator, with_bias_minus: bool, next: &mut dyn FnMut() -> f64) {
    d.output_high_drop_v = next();
    d.output_low_rise_v = next();
    d.offset_v = next();
    d.bias_plus_a = next();
    if with_bias_minus {
        d.bias_minus_a = next();
    }
    d.builtin_hysteresis_v = next();
}

/// DOMAIN §6: keep the divider current 20–100× the input current it feeds (common practice); a
/// zener or shunt reference must keep its minimum current at the lowest supply.
pub(crate) fn divider_current_check(
    reference: &Reference,
    d: &Comparator,
    settings: &CheckSettings,
    bias_a: f64,
    w: &mut Vec<Warning>,
) {
    reference.current_check(d, settings.supply_min_v, bias_a, w);
    let i_div = reference.divider_current_a(d.supply_v, d.negative_rail_v);
    let ib = bias_a.abs();
    if reference.is_divider() && ib > 0.0 && i_div < settings.divider_current_ratio * ib {
        w.push(Warning::new(
            WarningCode::DividerCurrentLow,
            format!(
                "reference divider current {:.3} µA is less than {:.0}× the input bias current {:.3} µA (common practice: 20–100×): lower Ra and Rb",
                i_div * 1e6,
                settings.divider_current_ratio,
                ib * 1e6
            ),
        ));
    }
}

/// Bias-current error (thresholds with and without the bias currents) against the resistor-tolerance
/// error Σ|∂VT+/∂Ri|·Ri·tol (DOMAIN §2, §6), for any circuit whose device is a [`Comparator`].
pub(crate) fn bias_error_check_with<C: Circuit>(
    circuit: &C,
    without_bias: &C,
    settings: &CheckSettings,
    w: &mut Vec<Warning>,
) {
    let (Ok(t), Ok(t0)) = (circuit.thresholds(), without_bias.thresholds()) else { return };
    let bias_err = (t.vt_upper_v - t0.vt_upper_v).abs().max((t.vt_lower_v - t0.vt_lower_v).abs());
    let Ok(s) = sensitivities(circuit) else { return };
    let tol_err: f64 = s
        .iter()
        .filter(|(p, _, _)| p.kind == ParameterKind::Resistor)
        .map(|(p, up, _)| (up * p.value).abs())
        .sum::<f64>()
        * settings.resistor_tolerance;
    bias_error_warning(bias_err, tol_err, settings, "", w);
}

/// DOMAIN §6: warns when the bias-current error `bias_err` (volts) exceeds the settings' fraction of
/// the resistor-tolerance error `tol_err` (volts). `terms` names where the error comes from, as
/// " (IB × node resistance …)", or is empty.
pub(crate) fn bias_error_warning(bias_err: f64, tol_err: f64, settings: &CheckSettings, terms: &str, w: &mut Vec<Warning>) {
    if bias_err > 0.0 && bias_err > settings.bias_error_fraction * tol_err {
        w.push(Warning::new(
            WarningCode::BiasCurrentError,
            format!(
                "bias-current error {:.2} mV{terms} exceeds {:.0} % of the resistor-tolerance error {:.2} mV: lower the resistances or use a lower-bias device",
                bias_err * 1e3,
                settings.bias_error_fraction * 100.0,
                tol_err * 1e3
            ),
        ));
    }
}

/// The trait methods every topology built around one [`Comparator`] in its field `device`
/// shares: `supply_v` and `with_supply` (the device's supply moves; in a supply monitor the
/// monitored rail is the input, not a supply), `device_input_range` and `negative_rail_v` from the
/// device. With `push_pull` also the push-pull output stage and the common-mode bench hint.
/// Use inside `impl Circuit for ...`.
macro_rules! comparator_rails {
    () => {
        fn supply_v(&self) -> f64 {
            self.device.supply_v
        }

        fn with_supply(&self, supply_v: f64) -> Self {
            let mut c = self.clone();
            c.device = $crate::topology::comparator::device_at_supply(&self.device, supply_v);
            c
        }

        fn device_input_range(&self) -> (f64, f64) {
            (self.device.input_min_v(), self.device.input_max_v())
        }

        fn negative_rail_v(&self) -> f64 {
            self.device.negative_rail_v
        }
    };
    (push_pull) => {
        $crate::topology::comparator::comparator_rails!();

        fn output_stage(&self) -> $crate::analysis::OutputStage {
            $crate::analysis::OutputStage::PushPull
        }

        fn troubleshooting(
            &self,
            _analysis: &$crate::analysis::Analysis,
            _checks: &$crate::analysis::CheckSettings,
        ) -> Vec<String> {
            vec![$crate::topology::comparator::common_mode_hint(self.device_input_range())]
        }
    };
}
pub(crate) use comparator_rails;

/// The device at another positive supply. On split supplies (negative rail below 0 V) the
/// negative rail moves in proportion, so a −5 % corner of ±12 V is ±11.4 V: both rails of a split
/// supply come from one regulator pair or one transformer and move together (common practice).
pub(crate) fn device_at_supply(d: &Comparator, supply_v: f64) -> Comparator {
    let mut out = *d;
    out.supply_v = supply_v;
    if d.negative_rail_v < 0.0 && d.supply_v > 0.0 {
        let k = supply_v / d.supply_v;
        if k.is_finite() {
            out.negative_rail_v = d.negative_rail_v * k;
        }
    }
    out
}

/// The bench hint on the device's common-mode range (its inputs must stay between `range`).
pub fn common_mode_hint(range: (f64, f64)) -> String {
    format!(
        "The device's inputs must stay inside its common-mode range ({:.3} V to {:.3} V); a reading far off near a rail often means an input left that range.",
        range.0, range.1
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quadratic_roots_are_stable() {
        // x² − 1e8·x + 1 = 0: the small root 1e-8 is lost by the textbook formula.
        let r = quadratic_roots(1.0, -1e8, 1.0);
        let small = r.iter().flatten().copied().fold(f64::INFINITY, f64::min);
        assert!((small - 1e-8).abs() < 1e-20);
        assert_eq!(quadratic_roots(0.0, 0.0, 0.0), [None, None]);
        assert_eq!(quadratic_roots(1.0, 0.0, 1.0), [None, None]);
        assert_eq!(quadratic_roots(0.0, 2.0, -1.0)[0], Some(0.5));
    }
}
