//! Circuit values derived from a scenario: per-phase source impedance, reactor,
//! load rating.  Pure arithmetic, no I/O.

use crate::scenario::{DcLoad, LineReactor, Scenario, SourceImpedance};
use crate::textbook::FieldError;
use serde::{Deserialize, Serialize};
use std::f64::consts::PI;

/// Impedances and ratings derived from the scenario.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Derived {
    /// Angular frequency, rad/s.
    pub omega_rad_s: f64,
    /// Supply (upstream) resistance per phase, ohm.
    pub r_source_ohm: f64,
    /// Supply (upstream) inductance per phase, H.
    pub l_source_h: f64,
    /// Line reactor resistance per phase, ohm.
    pub r_reactor_ohm: f64,
    /// Line reactor inductance per phase, H.
    pub l_reactor_h: f64,
    /// Short-circuit current at the PCC (upstream impedance only), A RMS.
    pub i_sc_a: f64,
    /// Short-circuit power at the PCC, VA.
    pub s_sc_va: f64,
    /// Rated load power used for percent impedances, W.
    pub rated_power_w: f64,
    /// Rated fundamental line current `P / (sqrt3 V)`, A RMS.
    pub rated_current_a: f64,
}

pub(crate) fn err(field: &str, reason: &str) -> FieldError {
    FieldError {
        field: field.into(),
        reason: reason.into(),
    }
}

pub(crate) fn pos(x: f64, field: &str) -> Result<f64, FieldError> {
    if x.is_finite() && x > 0.0 {
        Ok(x)
    } else {
        Err(err(field, "must be a positive number"))
    }
}

pub(crate) fn nonneg(x: f64, field: &str) -> Result<f64, FieldError> {
    if x.is_finite() && x >= 0.0 {
        Ok(x)
    } else {
        Err(err(field, "must be zero or a positive number"))
    }
}

/// Split an impedance magnitude into R and X given X/R.
fn split(z_ohm: f64, x_over_r: f64) -> (f64, f64) {
    let r = z_ohm / (1.0 + x_over_r * x_over_r).sqrt();
    (r, r * x_over_r)
}

/// Rated load power: the user's value, or an estimate from the load; 0 when
/// neither gives one (no rating and a load that draws nothing).
pub fn rated_power_w(s: &Scenario) -> f64 {
    if s.analysis.rated_power_w > 0.0 {
        return s.analysis.rated_power_w;
    }
    let vdo = crate::textbook::six_pulse_vdo(s.supply.v_ll_rms_v);
    let p = match &s.dc.load {
        DcLoad::ConstantPower { p_w } => *p_w,
        DcLoad::Resistor { r_ohm } => vdo * vdo / r_ohm,
        DcLoad::Rle { r_ohm, e_v, .. } => {
            let i = (vdo - e_v).abs() / r_ohm;
            (e_v.abs() + i * r_ohm) * i
        }
        DcLoad::ConstantCurrent { i_a } => vdo * i_a,
    };
    if p.is_finite() && p > 0.0 {
        p
    } else {
        0.0
    }
}

/// Derive per-phase impedances.  Reference for the per-unit conversions:
/// common practice (`Z_base = V_LL^2 / S`, `Z = z% / 100 x Z_base`,
/// `I_sc = V_LL / (sqrt3 Z)`), e.g. IEEE Std 399 (Brown Book) ch. 4.
pub fn derive(s: &Scenario) -> Result<Derived, FieldError> {
    let v = pos(s.supply.v_ll_rms_v, "supply.v_ll_rms_v")?;
    let f = pos(s.supply.f_hz, "supply.f_hz")?;
    if !(1.0..=1000.0).contains(&f) {
        return Err(err("supply.f_hz", "must be between 1 Hz and 1 kHz"));
    }
    let w = 2.0 * PI * f;
    let (r_s, l_s) = match &s.source.impedance {
        SourceImpedance::Direct { r_ohm, l_h } => (
            nonneg(*r_ohm, "source.impedance.r_ohm")?,
            nonneg(*l_h, "source.impedance.l_h")?,
        ),
        SourceImpedance::Transformer {
            s_kva,
            z_pct,
            x_over_r,
        } => {
            let s_va = pos(*s_kva, "source.impedance.s_kva")? * 1e3;
            let z = pos(*z_pct, "source.impedance.z_pct")? / 100.0 * v * v / s_va;
            let (r, x) = split(z, nonneg(*x_over_r, "source.impedance.x_over_r")?);
            (r, x / w)
        }
        SourceImpedance::ShortCircuitMva { s_sc_mva, x_over_r } => {
            let z = v * v / (pos(*s_sc_mva, "source.impedance.s_sc_mva")? * 1e6);
            let (r, x) = split(z, nonneg(*x_over_r, "source.impedance.x_over_r")?);
            (r, x / w)
        }
        SourceImpedance::ShortCircuitKa { i_sc_ka, x_over_r } => {
            let z = v / (3f64.sqrt() * pos(*i_sc_ka, "source.impedance.i_sc_ka")? * 1e3);
            let (r, x) = split(z, nonneg(*x_over_r, "source.impedance.x_over_r")?);
            (r, x / w)
        }
    };
    let rated_power_w = rated_power_w(s);
    if rated_power_w <= 0.0 {
        // A percent reactor, IL for TDD, the compliance limits and the
        // solver's scaling all rest on the rating: ask for it by name.
        return Err(err(
            "analysis.rated_power_w",
            "is 0 (take it from the load), but the load draws no power: give the equipment's rated power; the line reactor's % impedance, IL for TDD and the compliance checks are on it",
        ));
    }
    let (r_x, l_x) = match &s.source.reactor {
        LineReactor::None => (0.0, 0.0),
        LineReactor::Henry { l_h, r_ohm } => (
            nonneg(*r_ohm, "source.reactor.r_ohm")?,
            nonneg(*l_h, "source.reactor.l_h")?,
        ),
        LineReactor::Percent { z_pct, x_over_r } => {
            let z = nonneg(*z_pct, "source.reactor.z_pct")? / 100.0 * v * v / rated_power_w;
            let xr = pos(*x_over_r, "source.reactor.x_over_r")?;
            let (r, x) = split(z, xr);
            (r, x / w)
        }
    };
    let z_s = (r_s * r_s + (w * l_s).powi(2)).sqrt();
    let i_sc_a = if z_s > 0.0 {
        v / (3f64.sqrt() * z_s)
    } else {
        f64::INFINITY
    };
    Ok(Derived {
        omega_rad_s: w,
        r_source_ohm: r_s,
        l_source_h: l_s,
        r_reactor_ohm: r_x,
        l_reactor_h: l_x,
        i_sc_a,
        s_sc_va: 3f64.sqrt() * v * i_sc_a,
        rated_power_w,
        rated_current_a: rated_power_w / (3f64.sqrt() * v),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_load_without_a_rating_asks_for_the_rating_by_name() {
        let mut s = Scenario::default();
        s.dc.load = DcLoad::ConstantPower { p_w: 0.0 };
        s.analysis.rated_power_w = 0.0;
        let e = derive(&s).unwrap_err();
        assert_eq!(e.field, "analysis.rated_power_w");
        // With the rating given, the unloaded drive solves: its capacitor bus
        // charges to the peak line-to-line voltage, sqrt2 x 400 V = 565.7 V,
        // less the bleed resistor's tiny draw (common practice: the no-load
        // bus of a diode front end sits at the supply's line-to-line peak).
        s.analysis.rated_power_w = 45e3;
        let a = crate::analysis::analyze(&s).unwrap();
        let v = a.results.unwrap().dc.v_avg_v;
        assert!((v / (2f64.sqrt() * 400.0) - 1.0).abs() < 1e-3, "{v}");
    }

    #[test]
    fn transformer_percent_impedance() {
        // 1000 kVA, 5 %, 400 V: Z_base = 0.16 ohm, Z = 8 mohm; X/R = 6.
        let mut s = Scenario::default();
        s.source.impedance = SourceImpedance::Transformer {
            s_kva: 1000.0,
            z_pct: 5.0,
            x_over_r: 6.0,
        };
        s.source.reactor = LineReactor::None;
        let d = derive(&s).unwrap();
        let z = (d.r_source_ohm.powi(2) + (d.omega_rad_s * d.l_source_h).powi(2)).sqrt();
        assert!((z - 0.008).abs() < 1e-12);
        assert!((d.omega_rad_s * d.l_source_h / d.r_source_ohm - 6.0).abs() < 1e-9);
        // I_sc = 400 / (sqrt3 * 0.008) = 28.87 kA = rated current / 0.05.
        assert!((d.i_sc_a - 28_867.513).abs() < 0.01);
    }

    #[test]
    fn short_circuit_ka_and_mva_agree() {
        let mut a = Scenario::default();
        a.source.impedance = SourceImpedance::ShortCircuitKa {
            i_sc_ka: 10.0,
            x_over_r: 5.0,
        };
        let mut b = a.clone();
        b.source.impedance = SourceImpedance::ShortCircuitMva {
            s_sc_mva: 3f64.sqrt() * 400.0 * 10.0e3 / 1e6,
            x_over_r: 5.0,
        };
        let (da, db) = (derive(&a).unwrap(), derive(&b).unwrap());
        assert!((da.l_source_h - db.l_source_h).abs() < 1e-15);
        assert!((da.i_sc_a - 10e3).abs() < 1e-6);
    }

    #[test]
    fn bad_field_is_named() {
        let mut s = Scenario::default();
        s.source.impedance = SourceImpedance::Transformer {
            s_kva: -1.0,
            z_pct: 5.0,
            x_over_r: 6.0,
        };
        assert_eq!(derive(&s).unwrap_err().field, "source.impedance.s_kva");
    }
}
