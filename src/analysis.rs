//! The top-level analysis: one scenario in, one analysis out.

use crate::params::{self, Derived};
use crate::scenario::{BridgeKind, DcLoad, Scenario};
use crate::textbook::{self, FieldError, PulseFamily, TextbookInput, TextbookResult};
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Everything computed for a scenario.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Analysis {
    /// Rectifield version that produced this.
    pub version: String,
    pub derived: Derived,
    /// DC current the closed forms were evaluated at, A.
    pub textbook_i_d_a: f64,
    pub textbook: TextbookResult,
    /// The exact switched-circuit simulation (None when it failed; the reason is in `warnings`).
    pub sim: Option<crate::sim::SimResult>,
    /// Results computed from the simulation.
    pub results: Option<crate::results::Results>,
    /// Grid compliance at the PCC (when the results exist).
    pub compliance: Option<crate::compliance::Compliance>,
    pub warnings: Vec<String>,
}

/// Map a bridge kind to its closed-form family.
pub fn family(kind: BridgeKind) -> PulseFamily {
    match kind {
        BridgeKind::SixPulseDiode | BridgeKind::SixPulseThyristor => PulseFamily::SixPulse,
        BridgeKind::ThreePulseDiode | BridgeKind::ThreePulseThyristor => PulseFamily::ThreePulse,
        BridgeKind::TwelvePulseSeries => PulseFamily::TwelvePulseSeries,
        BridgeKind::TwelvePulseParallel => PulseFamily::TwelvePulseParallel,
    }
}

/// DC current the closed forms predict for the scenario's load, from
/// `Vd = Vdo cos(alpha) - k w Ls Id / pi` and the load law (derivation: substitute
/// the load's `Vd(Id)` and solve; for constant power the smaller root of
/// `k' Id^2 - Vdo cos(alpha) Id + P = 0` is the stable operating point).
pub fn textbook_dc_current(s: &Scenario, d: &Derived) -> Result<f64, FieldError> {
    let fam = family(s.bridge.kind);
    let probe = TextbookInput {
        family: fam,
        v_ll_rms_v: s.supply.v_ll_rms_v,
        f_hz: s.supply.f_hz,
        l_s_h: d.l_source_h + d.l_reactor_h,
        alpha_rad: alpha_rad(s),
        i_d_a: 1.0,
        h_max: 1,
    };
    let r1 = textbook::evaluate(&probe)?;
    let v0 = r1.vd_alpha_v;
    let k = r1.commutation_drop_v; // volts per ampere
    let id = match &s.dc.load {
        DcLoad::ConstantCurrent { i_a } => *i_a,
        DcLoad::Resistor { r_ohm } => v0 / (r_ohm + k + s.dc.choke_r_ohm),
        DcLoad::Rle { r_ohm, e_v, .. } => ((v0 - e_v) / (r_ohm + k + s.dc.choke_r_ohm)).max(0.0),
        DcLoad::ConstantPower { p_w } => {
            let kk = k + s.dc.choke_r_ohm;
            if kk <= 0.0 {
                p_w / v0
            } else {
                let disc = v0 * v0 - 4.0 * kk * p_w;
                if disc < 0.0 {
                    return Err(FieldError {
                        field: "dc.load.p_w".into(),
                        reason: "more power than the source can deliver through its impedance"
                            .into(),
                    });
                }
                (v0 - disc.sqrt()) / (2.0 * kk)
            }
        }
    };
    if !id.is_finite() || id < 0.0 {
        return Err(FieldError {
            field: "dc.load".into(),
            reason: "the load gives no valid DC current".into(),
        });
    }
    Ok(id)
}

/// Firing angle in radians (0 for diode bridges).
pub fn alpha_rad(s: &Scenario) -> f64 {
    if s.bridge.kind.is_controlled() {
        s.bridge.alpha_deg * PI / 180.0
    } else {
        0.0
    }
}

/// What an analysis finds before it simulates (see [`prepare`]).
pub(crate) struct Prepared {
    /// The input checks' warnings.
    pub warnings: Vec<String>,
    pub derived: Derived,
    /// DC current the closed forms are evaluated at, A.
    pub id: f64,
    pub textbook: TextbookResult,
}

/// What the results show that a user must not miss: a device that never
/// stops conducting, a small extinction angle, a constant-power load off its
/// setting, an overloaded bus capacitor.  (`analyze_from` lists them after
/// the input checks' and the simulation's warnings; a sweep point, which
/// computes no results, has only those.)
pub fn result_warnings(s: &Scenario, r: &crate::results::Results) -> Vec<String> {
    let mut warnings = Vec::new();
    let whole: Vec<&str> = r
        .ratings
        .devices
        .iter()
        .filter(|d| d.conducts_whole_period)
        .map(|d| d.name.as_str())
        .collect();
    if !whole.is_empty() {
        warnings.push(format!(
            "{} never stop{} conducting: the bridge short-circuits its DC side ({}). Each device of a working bridge conducts for at most 120 degrees plus the overlap",
            whole.join(", "),
            if whole.len() == 1 { "s" } else { "" },
            if s.bridge.kind.is_controlled() && s.bridge.alpha_deg > 90.0 {
                "a commutation failure: firing angle plus overlap reach 180 degrees, so the outgoing thyristor is never turned off; fire earlier or lower the DC current or source inductance"
            } else {
                "the DC current is more than the source inductance lets the bridge commutate; the figures describe that short circuit"
            }
        ));
    }
    if let Some(g) = r.dc.extinction_deg.filter(|g| *g < EXTINCTION_MIN_DEG) {
        warnings.push(format!(
            "extinction angle {g:.1} degrees is below about {EXTINCTION_MIN_DEG:.0} degrees (common practice for line-commutated inverters, from memory: the thyristors' turn-off time and supply dips need the margin); the inverter is close to commutation failure"
        ));
    }
    if let crate::scenario::DcLoad::ConstantPower { p_w } = s.dc.load {
        let got = r.dc.p_load_w;
        // 1 %: our threshold, far above the solver's tolerance.
        if p_w > 0.0 && (got - p_w).abs() > 0.01 * p_w {
            warnings.push(format!(
                "the constant-power load draws {:.2} kW, not its set {:.2} kW: the bus ripple is too large for its model (linearised about the mean bus voltage), so read the figures as those of a load near that power",
                got / 1e3,
                p_w / 1e3
            ));
        }
    }
    if let Some(c) = r.ratings.capacitor.as_ref().filter(|c| c.over_rating) {
        warnings.push(format!(
            "bus capacitor overloaded: {:.1} A RMS ripple in {} mOhm ESR heats its core to {:.0} °C, above its rated {:.0} °C",
            c.i_rms_a,
            crate::validate::fmt(s.dc.cap_esr_ohm * 1e3),
            c.core_temp_c,
            s.dc.cap_rated_temp_c
        ));
    }
    warnings
}

/// Below this extinction angle an inverting bridge is warned to be close to
/// commutation failure (common practice, from memory: 15 to 20 degrees at
/// 50/60 Hz covers turn-off time and supply dips).
pub const EXTINCTION_MIN_DEG: f64 = 15.0;

/// The input checks, the derived parameters and the closed forms of `s`:
/// the start of every analysis, and of every sweep point (which must fail
/// where the analysis fails, with its error).
pub(crate) fn prepare(s: &Scenario) -> Result<Prepared, FieldError> {
    let warnings = crate::validate::validate(s)?;
    let derived = params::derive(s)?;
    crate::compliance::validate(&s.compliance)?;
    let id = textbook_dc_current(s, &derived).unwrap_or(0.0);
    let textbook = textbook::evaluate(&TextbookInput {
        family: family(s.bridge.kind),
        v_ll_rms_v: s.supply.v_ll_rms_v,
        f_hz: s.supply.f_hz,
        l_s_h: derived.l_source_h + derived.l_reactor_h,
        alpha_rad: alpha_rad(s),
        i_d_a: id,
        h_max: s.analysis.h_max.clamp(1, 100),
    })?;
    Ok(Prepared {
        warnings,
        derived,
        id,
        textbook,
    })
}

/// Analyse one scenario.
pub fn analyze(s: &Scenario) -> Result<Analysis, FieldError> {
    analyze_from(s, None)
}

/// [`analyze`] with the simulation started from a nearby solution (a
/// sweep's previous point: `analysis.sim.warm_start`); see
/// [`crate::sim::WarmStart`].
pub fn analyze_from(
    s: &Scenario,
    warm: Option<&crate::sim::WarmStart>,
) -> Result<Analysis, FieldError> {
    let Prepared {
        mut warnings,
        derived,
        id,
        textbook,
    } = prepare(s)?;
    let (sim, results) = match crate::sim::simulate_from(s, &derived, warm) {
        Ok(sim) => {
            warnings.extend(sim.warnings.iter().cloned());
            let r = crate::results::compute(s, &derived, &sim, &textbook);
            warnings.extend(result_warnings(s, &r));
            (Some(sim), Some(r))
        }
        Err(e) => {
            warnings.push(format!("simulation: {e}"));
            (None, None)
        }
    };
    let compliance = match (&sim, &results) {
        (Some(sim), Some(r)) => Some(crate::compliance::assess_with_fixes(
            s,
            &derived,
            sim,
            r,
            &s.compliance,
        )),
        _ => None,
    };
    Ok(Analysis {
        version: env!("CARGO_PKG_VERSION").to_string(),
        derived,
        textbook_i_d_a: id,
        textbook,
        sim,
        compliance,
        results,
        warnings,
    })
}
