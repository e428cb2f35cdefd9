//! The power-up transient from a discharged bus, with a precharge resistor and
//! its bypass (issue #3), on the built-in default scenario (a drive front end
//! with a constant-power load, 50 Hz).
//!
//! The bounds are physical, not golden values: no current can exceed the
//! supply's prospective short-circuit peak `2 sqrt2 I_sc` (the fully offset
//! first peak of a short circuit is below twice the symmetrical peak; common
//! practice), and once the bypass has closed the bus settles to the steady
//! state's mean.

use rectifield::analysis::analyze;
use rectifield::scenario::Scenario;

fn with_precharge(bypass_s: f64, bypass_pu: f64) -> Scenario {
    let mut s = Scenario::default();
    s.dc.precharge_r_ohm = 20.0;
    s.dc.precharge_bypass_s = bypass_s;
    s.dc.precharge_bypass_pu = bypass_pu;
    s.analysis.transient_cycles = 60;
    s
}

/// A bypass time on the grid (0.5 s is 25 whole cycles at 50 Hz, a grid
/// point) once never closed; the transient then ran the whole window on the
/// precharge resistor.
#[test]
fn bypass_closes_at_its_time_on_a_grid_point() {
    let s = with_precharge(0.5, 0.0);
    assert_eq!(s.supply.f_hz, 50.0, "the default scenario is 50 Hz");
    let a = analyze(&s).expect("valid");
    let tr = a
        .sim
        .expect("simulated")
        .transient
        .expect("transient asked for");
    let at = tr.bypass_at_s.expect("the bypass closes");
    assert!((at - 0.5).abs() < 1e-9, "bypass at {at} s");
    // The bus charges (with the inverter held off, before the bypass: see
    // `inverter_held_off_until_the_bypass_closes`).
    assert!(tr.charge_time_s.is_some(), "the bus never charged");
}

/// A constant-power load was linearised about the steady bus voltage in the
/// transient too: a negative resistance that, on a bus held low by the
/// precharge resistor, grew without bound (an inrush peak of 5e22 A was
/// reported).  It is now held off until the bypass closes, then its
/// equivalent resistance V0^2 / P.
#[test]
fn constant_power_load_power_up_stays_bounded() {
    for (bypass_s, bypass_pu) in [(0.5, 0.0), (0.0, 0.8), (0.3, 0.0)] {
        let s = with_precharge(bypass_s, bypass_pu);
        let a = analyze(&s).expect("valid");
        let i_limit = 2.0 * 2f64.sqrt() * a.derived.i_sc_a;
        let sim = a.sim.expect("simulated");
        let v_mean = sim.signals[sim.roles.v_dc].mean;
        let tr = sim.transient.expect("transient asked for");
        assert!(
            tr.inrush_peak_a.is_finite() && tr.inrush_peak_a < i_limit,
            "bypass {bypass_s} s / {bypass_pu} pu: inrush {} A against the prospective {} A",
            tr.inrush_peak_a,
            i_limit
        );
        let v_peak = 2f64.sqrt() * s.supply.v_ll_rms_v;
        for v in &tr.v_dc {
            assert!(
                v.is_finite() && *v > -0.05 * v_peak && *v < 1.5 * v_peak,
                "bus {v} V outside what the supply can make"
            );
        }
        if tr.bypass_at_s.is_some() {
            let end = *tr.v_dc.last().expect("samples");
            assert!(
                (end - v_mean).abs() < 0.05 * v_mean,
                "bus {end} V at the end against the steady mean {v_mean} V"
            );
        }
    }
}

/// A drive holds its inverter off until the precharge is done (common
/// practice: the drive enables its output once the bypass has closed).  Until
/// the bypass closes the bus has no load, so it charges through the
/// precharge resistor towards the line-to-line peak `sqrt2 V_LL`, the no-load
/// DC voltage of a capacitor-filtered six-pulse bridge (Mohan, Undeland and
/// Robbins, 3rd ed., sec. 5-3: the capacitor charges to the peak of the
/// line-to-line voltage with no load); afterwards it settles at the steady
/// state's mean with the load on.  The inrush stays at or below what the
/// precharge resistor alone lets through at the start, about
/// `sqrt2 V_LL / R`, plus the bypass closing onto a bus within a few percent
/// of the peak.
#[test]
fn inverter_held_off_until_the_bypass_closes() {
    let s = with_precharge(0.5, 0.0);
    let a = analyze(&s).expect("valid");
    let sim = a.sim.expect("simulated");
    let v_mean = sim.signals[sim.roles.v_dc].mean;
    let tr = sim.transient.expect("transient asked for");
    let v_peak = 2f64.sqrt() * s.supply.v_ll_rms_v;
    let at = tr.bypass_at_s.expect("the bypass closes");
    // The last sample before the bypass closes.
    let k = tr
        .t_s
        .iter()
        .rposition(|&t| t < at - 1e-6)
        .expect("samples before the bypass");
    let v_before = tr.v_dc[k];
    assert!(
        v_before > 0.97 * v_peak && v_before < 1.01 * v_peak,
        "bus {v_before} V before the bypass, no-load peak {v_peak} V"
    );
    // No load: the bus is charged (90 % of the steady mean) well before the bypass.
    let charge = tr.charge_time_s.expect("the bus charges");
    assert!(charge < at, "charged at {charge} s, bypass at {at} s");
    let end = *tr.v_dc.last().expect("samples");
    assert!(
        (end - v_mean).abs() < 0.03 * v_mean,
        "bus {end} V at the end against the steady mean {v_mean} V"
    );
}

/// The power-up's peaks apart: through the precharge resistor, after the
/// bypass, and the bus voltage.  Bounds (common practice, first-order): at
/// switch-on the discharged bus is a short behind the resistor, so the
/// resistor's current peaks near, and not above, the line-to-line peak over
/// its resistance, `sqrt2 V_LL / R` (less the source's drop and the charge
/// already taken); the whole-window peak is the larger of the two parts.
#[test]
fn power_up_peaks_are_given_apart_and_bounded() {
    let s = with_precharge(0.5, 0.0);
    let a = analyze(&s).expect("valid");
    let tr = a.sim.expect("simulated").transient.expect("transient");
    let r_peak = tr.precharge_peak_a.expect("a precharge resistor is fitted");
    let bound = 2f64.sqrt() * s.supply.v_ll_rms_v / s.dc.precharge_r_ohm;
    assert!(
        r_peak <= bound && r_peak > 0.85 * bound,
        "precharge peak {r_peak} A against sqrt2 V / R = {bound} A"
    );
    let surge = tr.bypass_surge_a.expect("the bypass closed");
    assert!((tr.inrush_peak_a - r_peak.max(surge)).abs() <= 1e-9 * tr.inrush_peak_a);
    // The bus never goes below zero and its peak is on the trace.
    assert!(tr.v_dc.iter().all(|v| *v >= -1e-6 * tr.v_dc_peak_v));
    assert!(tr.v_dc.contains(&tr.v_dc_peak_v));
}

/// With neither a bypass time nor a level the bypass never closes: said.
#[test]
fn a_bypass_without_a_rule_is_warned() {
    let s = with_precharge(0.0, 0.0);
    let a = analyze(&s).expect("valid");
    assert!(
        a.warnings.iter().any(|w| w.contains("never closes")),
        "{:?}",
        a.warnings
    );
    let tr = a.sim.expect("simulated").transient.expect("transient");
    assert!(tr.bypass_at_s.is_none() && tr.bypass_surge_a.is_none());
}
