//! Validation of a whole scenario before anything is computed.
//!
//! [`validate`] checks every field against a physical range and then the
//! combinations of fields that cannot work together.  A bad value comes back
//! as a [`FieldError`] naming the dotted path of the field and a plain
//! reason; values that are legal but probably not what the user meant come
//! back as warnings.  Pure: no I/O, no panics.
//!
//! The ranges are the span this engine is built and tested for (issue #9):
//! V_LL 1 V to 1 MV, f 1 Hz to 1 kHz, inductances 0 or 1 uH to 10 H,
//! capacitances 0 or 1 uF to 1 F, resistances 0 (or 1 mOhm for a load) to
//! 1 MOhm, firing angle 0 to 179 degrees.  They are our choice of what the
//! solver is meant to handle, not limits from a standard.

use crate::analysis::family;
use crate::scenario::{BridgeKind, DcLoad, LineReactor, Scenario, SourceImpedance, SCHEMA_VERSION};
use crate::textbook::{FieldError, PulseFamily};
use std::f64::consts::{PI, SQRT_2};

/// Longest accepted case name, characters.
pub const MAX_NAME_CHARS: usize = 1000;
/// Longest accepted notes, characters.
pub const MAX_NOTES_CHARS: usize = 200_000;
/// Most supply harmonics in one scenario.
pub const MAX_HARMONICS: usize = 100;

/// Largest line-to-line voltage, V.
pub const V_LL_MAX_V: f64 = 1e6;
/// Smallest nonzero inductance, H.
pub const L_MIN_H: f64 = 1e-6;
/// Largest inductance, H.
pub const L_MAX_H: f64 = 10.0;
/// Smallest nonzero capacitance, F.
pub const C_MIN_F: f64 = 1e-6;
/// Largest capacitance, F.
pub const C_MAX_F: f64 = 1.0;
/// Largest resistance, ohm.
pub const R_MAX_OHM: f64 = 1e6;
/// Smallest load resistance, ohm.
pub const R_LOAD_MIN_OHM: f64 = 1e-3;

fn fe(field: &str, reason: impl Into<String>) -> FieldError {
    FieldError {
        field: field.into(),
        reason: reason.into(),
    }
}

/// `x` finite and within `[lo, hi]`; `what` describes the range for the message.
fn range(x: f64, lo: f64, hi: f64, field: &str, what: &str) -> Result<(), FieldError> {
    if !x.is_finite() {
        return Err(fe(field, format!("must be a number ({what})")));
    }
    if x < lo || x > hi {
        return Err(fe(field, format!("{} is out of range: {what}", fmt(x))));
    }
    Ok(())
}

/// Zero, or between `lo` and `hi`.
fn zero_or(x: f64, lo: f64, hi: f64, field: &str, what: &str) -> Result<(), FieldError> {
    if x == 0.0 {
        return Ok(());
    }
    range(x, lo, hi, field, what)
}

fn inductance(x: f64, field: &str) -> Result<(), FieldError> {
    zero_or(x, L_MIN_H, L_MAX_H, field, "0 (none) or 1 uH to 10 H")
}

fn capacitance(x: f64, field: &str) -> Result<(), FieldError> {
    zero_or(x, C_MIN_F, C_MAX_F, field, "0 (none) or 1 uF to 1 F")
}

fn resistance(x: f64, field: &str) -> Result<(), FieldError> {
    range(x, 0.0, R_MAX_OHM, field, "0 to 1 MOhm")
}

fn load_resistance(x: f64, field: &str) -> Result<(), FieldError> {
    range(x, R_LOAD_MIN_OHM, R_MAX_OHM, field, "1 mOhm to 1 MOhm")
}

/// A short number for messages.
pub(crate) fn fmt(x: f64) -> String {
    if x == 0.0 || (1e-3..1e6).contains(&x.abs()) {
        let s = format!("{x:.4}");
        let s = s.trim_end_matches('0').trim_end_matches('.');
        s.to_string()
    } else {
        format!("{x:.3e}")
    }
}

/// Number of devices the engine lists for a bridge (the valid range of
/// `bridge.open_device`): see the device loops in `sim::build`.
pub fn device_count(kind: BridgeKind) -> usize {
    match kind {
        BridgeKind::ThreePulseDiode | BridgeKind::ThreePulseThyristor => 3,
        BridgeKind::SixPulseDiode | BridgeKind::SixPulseThyristor => 6,
        BridgeKind::TwelvePulseSeries | BridgeKind::TwelvePulseParallel => 12,
    }
}

/// Phase (0 = a, 1 = b, 2 = c) of device `i`: every bridge lists its devices
/// a, b, c (upper, then lower, then the second bridge), see `sim::build`.
pub fn device_phase(i: usize) -> usize {
    i % 3
}

const PHASE: [&str; 3] = ["a", "b", "c"];

/// Highest line-to-line EMF, per unit of its peak, across a pair of devices
/// (one upper, one lower, on different phases) of a six-pulse thyristor
/// bridge while both their gates are on; `None` when no two such gates are
/// ever on together (a gate under 60 degrees wide).  Starting from zero
/// current a pair must be gated at once, which is why six-pulse bridges get
/// wide or double pulses (common practice; Mohan, Undeland and Robbins,
/// *Power Electronics*, 3rd ed., ch. 6 on the six-pulse firing sequence;
/// the chapter from memory).
///
/// Angles are `phi` of the phase-a EMF `V_p cos(phi)`, with `v_b` lagging by
/// 120 degrees and `v_c` leading by 120.  The upper device of phase `u`
/// (0, 1, 2 for a, b, c) is gated from `alpha - 60 + 120 u` and the lower
/// one of phase `l` from `alpha + 120 + 120 l`, each for `width_deg` (a+,
/// c-, b+, a-, c+, b- in turn 60 degrees apart, a+ at its natural
/// commutation point `phi = -60` plus alpha).  The pair voltage is
/// `v_u - v_l = Re[(e^(-j120u) - e^(-j120l)) e^(j phi)] V_p`, of magnitude
/// `sqrt3 V_p`, the line-to-line peak.
pub fn six_pulse_pair_max_pu(alpha_deg: f64, width_deg: f64) -> Option<f64> {
    let mut best: Option<f64> = None;
    for u in 0..3 {
        for l in 0..3 {
            if u == l {
                continue;
            }
            let (su, sl) = (120.0 * u as f64, 120.0 * l as f64);
            let re = (-su).to_radians().cos() - (-sl).to_radians().cos();
            let im = (-su).to_radians().sin() - (-sl).to_radians().sin();
            // v_u - v_l = |D| cos(phi + arg D), |D| = sqrt3.
            let shift = im.atan2(re).to_degrees();
            let start_u = alpha_deg - 60.0 + su;
            let start_l = alpha_deg + 120.0 + sl;
            // Both windows on the unrolled circle: the lower one shifted by
            // whole turns so that every overlap is found.
            for k in -2..=2 {
                let lo_l = start_l + 360.0 * k as f64;
                let lo = start_u.max(lo_l);
                let hi = (start_u + width_deg).min(lo_l + width_deg);
                if hi >= lo {
                    let m = cos_window_max(lo + shift, hi + shift);
                    best = Some(best.map_or(m, |b: f64| b.max(m)));
                }
            }
        }
    }
    best
}

/// Highest value of `cos(phi)` over `phi` in `[lo_deg, hi_deg]`.
pub fn cos_window_max(lo_deg: f64, hi_deg: f64) -> f64 {
    // A whole multiple of 360 degrees inside the window is a peak.
    if (lo_deg / 360.0).ceil() * 360.0 <= hi_deg {
        return 1.0;
    }
    lo_deg.to_radians().cos().max(hi_deg.to_radians().cos())
}

/// A constant-power load above this multiple of the stated rating is warned.
pub const OVER_RATING: f64 = 1.5;

/// Check a scenario.  Returns the warnings for a legal scenario, or the
/// first bad field.
///
/// Cross-field checks (each a necessary condition, so a case that could work
/// is never refused):
///
/// * **Back-EMF against the firing angle** (R-L-E load).  A thyristor starts
///   conducting only while its gate is on and the bridge voltage it would
///   connect exceeds `E` plus the device thresholds.  With the phase-a EMF
///   `V_p cos(phi)`, `V_p = sqrt2 V_LL / sqrt3`, the natural commutation point
///   of device a+ is `phi = -60 deg`, so its gate is on for
///   `phi in [alpha - 60, alpha - 60 + width]`.  In a six-pulse bridge a
///   start from zero current needs an upper and a lower device on different
///   phases gated at once, and the line-to-line EMF between their phases
///   above `E + 2 V_th` meanwhile ([`six_pulse_pair_max_pu`]: the devices
///   fire in the order a+, c-, b+, a-, c+, b-, 60 degrees apart, so with a
///   gate of width `w >= 60` each device shares `w - 60` degrees with the one
///   fired before it, whose pair voltage starts at
///   `sqrt2 V_LL cos(alpha - 30)` and then falls once `alpha > 30`; under
///   60 degrees no pair is ever gated).
///   In the three-pulse (star) bridge the bus is `v_a = V_p cos(phi)`, so
///   `V_p max_window cos(phi) > E + V_th`.  By symmetry the same holds for
///   every device.  That is for a start from zero current.  With continuous
///   current a device turns on against the device it relieves, and the
///   steady state needs the mean bus voltage above E: at most
///   `Vdo cos(alpha)` (ideal, no overlap; overlap and resistance lower it),
///   `Vdo = 3 sqrt2 V_LL / pi` (six-pulse) or `3 sqrt2 V_LL / (2 pi)`
///   (three-pulse), see `textbook`.  The firing angle is refused only when
///   both fail.  Checked on a balanced sinusoidal supply; otherwise only the
///   bound below.
/// * **Back-EMF above any voltage the bridge can make**: `E + n V_th` at or
///   above the highest line-to-line (or, three-pulse, phase) EMF peak,
///   counting every background harmonic at its full value.
/// * **Constant-power load above what the source can deliver** (rough bound,
///   generous on purpose): with the DC current `Id` and the source drop
///   `k Id`, `k = 3 w L / pi + 2 R` per six-pulse bridge (the commutation drop
///   of the closed forms, see `textbook`, plus the resistance of two lines),
///   the bus power `(V - k Id) Id` is at most `V^2 / (4 k)` with `V` the
///   highest EMF peak (above the average a bridge makes).  A load above that
///   cannot be supplied.
/// * **Faults**: all three phases open; two phases open on a three-wire
///   bridge (no return path); an open device on a phase that is already
///   open (the same fault twice).
pub fn validate(s: &Scenario) -> Result<Vec<String>, FieldError> {
    let mut warn = Vec::new();
    if s.schema_version == 0 || s.schema_version > SCHEMA_VERSION {
        return Err(fe(
            "schema_version",
            format!(
                "{} is not supported by this build (1 to {SCHEMA_VERSION})",
                s.schema_version
            ),
        ));
    }
    if s.name.chars().count() > MAX_NAME_CHARS {
        return Err(fe("name", format!("at most {MAX_NAME_CHARS} characters")));
    }
    if s.notes.chars().count() > MAX_NOTES_CHARS {
        return Err(fe("notes", format!("at most {MAX_NOTES_CHARS} characters")));
    }

    // ---- supply
    let sup = &s.supply;
    range(
        sup.v_ll_rms_v,
        1.0,
        V_LL_MAX_V,
        "supply.v_ll_rms_v",
        "1 V to 1 MV",
    )?;
    range(sup.f_hz, 1.0, 1000.0, "supply.f_hz", "1 Hz to 1 kHz")?;
    for k in 0..3 {
        range(
            sup.phase_magnitude_pu[k],
            0.0,
            2.0,
            &format!("supply.phase_magnitude_pu.{k}"),
            "0 to 2 per unit",
        )?;
        range(
            sup.phase_angle_offset_deg[k],
            -180.0,
            180.0,
            &format!("supply.phase_angle_offset_deg.{k}"),
            "-180 to 180 degrees",
        )?;
    }
    if sup.harmonics.len() > MAX_HARMONICS {
        return Err(fe(
            "supply.harmonics",
            format!("at most {MAX_HARMONICS} harmonics"),
        ));
    }
    let mut seen = [false; 51];
    let mut harm_sum_pu = 0.0;
    for (i, h) in sup.harmonics.iter().enumerate() {
        let p = format!("supply.harmonics.{i}");
        if !(2..=50).contains(&h.order) {
            return Err(fe(
                &format!("{p}.order"),
                format!("{} is out of range: a whole number from 2 to 50", h.order),
            ));
        }
        range(
            h.magnitude_pct,
            0.0,
            30.0,
            &format!("{p}.magnitude_pct"),
            "0 to 30 % of the fundamental",
        )?;
        range(
            h.phase_deg,
            -360.0,
            360.0,
            &format!("{p}.phase_deg"),
            "-360 to 360 degrees",
        )?;
        let o = h.order as usize;
        if seen[o] {
            warn.push(format!(
                "supply.harmonics: order {} is listed more than once; the entries add",
                h.order
            ));
        }
        seen[o] = true;
        harm_sum_pu += h.magnitude_pct / 100.0;
    }
    let live: Vec<usize> = (0..3)
        .filter(|&k| !sup.phase_open[k] && sup.phase_magnitude_pu[k] > 0.0)
        .collect();
    if sup.phase_open.iter().all(|&o| o) {
        return Err(fe(
            "supply.phase_open",
            "all three phases are open: nothing reaches the bridge",
        ));
    }
    let three_pulse = family(s.bridge.kind) == PulseFamily::ThreePulse;
    let n_open = sup.phase_open.iter().filter(|&&o| o).count();
    if !three_pulse && n_open >= 2 {
        return Err(fe(
            "supply.phase_open",
            "two phases are open: a three-wire bridge has no return path, so no current can flow",
        ));
    }
    if live.is_empty() || (!three_pulse && live.len() < 2) {
        return Err(fe(
            "supply.phase_magnitude_pu",
            "fewer live phases than the bridge needs (a magnitude of 0 is a dead phase)",
        ));
    }

    // ---- source
    match &s.source.impedance {
        SourceImpedance::Direct { r_ohm, l_h } => {
            resistance(*r_ohm, "source.impedance.r_ohm")?;
            inductance(*l_h, "source.impedance.l_h")?;
        }
        SourceImpedance::Transformer {
            s_kva,
            z_pct,
            x_over_r,
        } => {
            range(
                *s_kva,
                1e-3,
                1e7,
                "source.impedance.s_kva",
                "1 VA to 10 GVA (in kVA)",
            )?;
            range(
                *z_pct,
                0.01,
                100.0,
                "source.impedance.z_pct",
                "0.01 to 100 %",
            )?;
            range(
                *x_over_r,
                0.0,
                1000.0,
                "source.impedance.x_over_r",
                "0 to 1000",
            )?;
        }
        SourceImpedance::ShortCircuitMva { s_sc_mva, x_over_r } => {
            range(
                *s_sc_mva,
                1e-6,
                1e6,
                "source.impedance.s_sc_mva",
                "1 VA to 1 TVA (in MVA)",
            )?;
            range(
                *x_over_r,
                0.0,
                1000.0,
                "source.impedance.x_over_r",
                "0 to 1000",
            )?;
        }
        SourceImpedance::ShortCircuitKa { i_sc_ka, x_over_r } => {
            range(
                *i_sc_ka,
                1e-6,
                1e4,
                "source.impedance.i_sc_ka",
                "1 mA to 10 MA (in kA)",
            )?;
            range(
                *x_over_r,
                0.0,
                1000.0,
                "source.impedance.x_over_r",
                "0 to 1000",
            )?;
        }
    }
    match &s.source.reactor {
        LineReactor::None => {}
        LineReactor::Henry { l_h, r_ohm } => {
            inductance(*l_h, "source.reactor.l_h")?;
            resistance(*r_ohm, "source.reactor.r_ohm")?;
        }
        LineReactor::Percent { z_pct, x_over_r } => {
            range(*z_pct, 0.0, 100.0, "source.reactor.z_pct", "0 to 100 %")?;
            range(
                *x_over_r,
                0.01,
                1000.0,
                "source.reactor.x_over_r",
                "0.01 to 1000",
            )?;
        }
    }

    // ---- bridge
    let b = &s.bridge;
    range(
        b.alpha_deg,
        0.0,
        179.0,
        "bridge.alpha_deg",
        "0 to 179 degrees",
    )?;
    range(
        b.gate_width_deg,
        1.0,
        179.0,
        "bridge.gate_width_deg",
        "1 to 179 degrees",
    )?;
    range(
        b.v_threshold_v,
        0.0,
        10.0,
        "bridge.v_threshold_v",
        "0 to 10 V",
    )?;
    range(
        b.r_slope_ohm,
        0.0,
        10.0,
        "bridge.r_slope_ohm",
        "0 to 10 Ohm",
    )?;
    inductance(b.interphase_l_h, "bridge.interphase_l_h")?;
    if b.kind == BridgeKind::TwelvePulseParallel && b.interphase_l_h == 0.0 {
        return Err(fe(
            "bridge.interphase_l_h",
            "a parallel twelve-pulse bridge needs an interphase reactor (1 uH to 10 H)",
        ));
    }
    let n_dev = device_count(b.kind);
    if let Some(i) = b.open_device {
        if i >= n_dev {
            return Err(fe(
                "bridge.open_device",
                format!(
                    "{i} is not a device of this bridge (it has {n_dev}, numbered 0 to {})",
                    n_dev - 1
                ),
            ));
        }
        let ph = device_phase(i);
        if sup.phase_open[ph] {
            return Err(fe(
                "bridge.open_device",
                format!(
                    "device {i} is on phase {}, which is already open: choose one fault (the lost phase or the open device)",
                    PHASE[ph]
                ),
            ));
        }
    }
    if b.kind == BridgeKind::SixPulseThyristor && b.gate_width_deg <= 60.0 {
        warn.push(format!(
            "bridge.gate_width_deg: {} degrees is not over 60: a six-pulse bridge needs two devices gated at once to start from zero current, so it cannot start from rest, nor draw the separate pulses of a capacitor bus (common practice: wide or double pulses)",
            fmt(b.gate_width_deg)
        ));
    }

    // ---- DC side
    let dc = &s.dc;
    inductance(dc.choke_l_h, "dc.choke_l_h")?;
    resistance(dc.choke_r_ohm, "dc.choke_r_ohm")?;
    capacitance(dc.cap_f, "dc.cap_f")?;
    resistance(dc.cap_esr_ohm, "dc.cap_esr_ohm")?;
    resistance(dc.bleed_r_ohm, "dc.bleed_r_ohm")?;
    if dc.bleed_r_ohm > 0.0 {
        load_resistance(dc.bleed_r_ohm, "dc.bleed_r_ohm")?;
    }
    resistance(dc.precharge_r_ohm, "dc.precharge_r_ohm")?;
    range(
        dc.precharge_bypass_s,
        0.0,
        3600.0,
        "dc.precharge_bypass_s",
        "0 to 3600 s",
    )?;
    range(
        dc.precharge_bypass_pu,
        0.0,
        2.0,
        "dc.precharge_bypass_pu",
        "0 to 2 per unit",
    )?;
    range(
        dc.cap_rth_k_per_w,
        0.0,
        1000.0,
        "dc.cap_rth_k_per_w",
        "0 to 1000 K/W",
    )?;
    range(
        dc.cap_rated_life_h,
        1.0,
        1e7,
        "dc.cap_rated_life_h",
        "1 to 10 million hours",
    )?;
    range(
        dc.cap_rated_temp_c,
        -60.0,
        250.0,
        "dc.cap_rated_temp_c",
        "-60 to 250 C",
    )?;
    range(dc.ambient_c, -60.0, 200.0, "dc.ambient_c", "-60 to 200 C")?;
    if dc.precharge_stuck && dc.precharge_r_ohm == 0.0 {
        warn.push(
            "dc.precharge_stuck: there is no precharge resistor, so this has no effect".into(),
        );
    }
    if dc.cap_f > 0.0 && dc.ambient_c >= dc.cap_rated_temp_c {
        warn.push(
            "dc.ambient_c: the ambient is at or above the capacitors' rated temperature".into(),
        );
    }
    match &dc.load {
        DcLoad::Resistor { r_ohm } => load_resistance(*r_ohm, "dc.load.r_ohm")?,
        DcLoad::Rle { r_ohm, l_h, e_v } => {
            load_resistance(*r_ohm, "dc.load.r_ohm")?;
            inductance(*l_h, "dc.load.l_h")?;
            range(
                *e_v,
                -V_LL_MAX_V * 3.0,
                V_LL_MAX_V * 3.0,
                "dc.load.e_v",
                "-3 MV to 3 MV",
            )?;
        }
        DcLoad::ConstantCurrent { i_a } => {
            range(*i_a, 0.0, 1e6, "dc.load.i_a", "0 to 1 MA")?;
        }
        DcLoad::ConstantPower { p_w } => {
            range(*p_w, 0.0, 1e10, "dc.load.p_w", "0 to 10 GW")?;
            if dc.cap_f == 0.0 && *p_w > 0.0 {
                warn.push("dc.load: a constant-power load with no bus capacitor is a negative resistance on the bridge; the solver may not settle (common practice: a drive bus always has a capacitor)".into());
            }
            // A load far past the stated rating (a load sweep run on past
            // it, or a slip of a factor of ten): the percent reactor and the
            // demand current are on the rating.  1.5 x: a drive's usual
            // short overload rating (common practice, from memory: 150 % for
            // about a minute).
            let rated = s.analysis.rated_power_w;
            if rated > 0.0 && *p_w > OVER_RATING * rated {
                warn.push(format!(
                    "dc.load.p_w: the load, {:.1} kW, is {:.1} times the rating given ({:.1} kW, analysis.rated_power_w); the percent reactor and the demand current are on the rating, and a drive carries more than about 1.5 times its rating only briefly (common practice)",
                    p_w / 1e3,
                    p_w / rated,
                    rated / 1e3
                ));
            }
        }
    }

    // ---- analysis settings
    let a = &s.analysis;
    if !(1..=100).contains(&a.h_max) {
        return Err(fe(
            "analysis.h_max",
            format!("{} is out of range: a whole number from 1 to 100", a.h_max),
        ));
    }
    if !(60..=20_000).contains(&a.grid_points) {
        return Err(fe(
            "analysis.grid_points",
            format!(
                "{} is out of range: 60 to 20000 points per period",
                a.grid_points
            ),
        ));
    }
    if a.grid_points < 2 * a.h_max as usize {
        warn.push(format!(
            "analysis.grid_points: {} points per period resolve harmonics only up to {}; h_max is {}",
            a.grid_points,
            a.grid_points / 2,
            a.h_max
        ));
    }
    range(
        a.rated_power_w,
        0.0,
        1e10,
        "analysis.rated_power_w",
        "0 (from the load) to 10 GW",
    )?;
    range(
        a.demand_current_a,
        0.0,
        1e7,
        "analysis.demand_current_a",
        "0 (computed) to 10 MA",
    )?;
    if a.transient_cycles > 2000 {
        return Err(fe(
            "analysis.transient_cycles",
            format!(
                "{} is out of range: 0 to 2000 supply cycles",
                a.transient_cycles
            ),
        ));
    }
    crate::compliance::validate(&s.compliance)?;

    // ---- cross-field: derived impedances (also checks the per-unit inputs)
    let d = crate::params::derive(s)?;
    for (x, field) in [
        (d.l_source_h, "source.impedance"),
        (d.l_reactor_h, "source.reactor"),
    ] {
        if x > L_MAX_H {
            // A percent reactor is on the rated load power: say which.
            let basis = match (&s.source.reactor, field) {
                (crate::scenario::LineReactor::Percent { z_pct, .. }, "source.reactor") => {
                    format!(
                        " ({} % on a rated load power of {} W{})",
                        fmt(*z_pct),
                        fmt(d.rated_power_w),
                        if a.rated_power_w > 0.0 {
                            ""
                        } else {
                            ", taken from the load"
                        }
                    )
                }
                _ => String::new(),
            };
            return Err(fe(
                field,
                format!(
                    "gives {} H per phase{basis}, above the 10 H this engine handles",
                    fmt(x)
                ),
            ));
        }
    }
    for (x, field) in [
        (d.r_source_ohm, "source.impedance"),
        (d.r_reactor_ohm, "source.reactor"),
    ] {
        if !(x.is_finite() && x <= R_MAX_OHM) {
            return Err(fe(
                field,
                format!(
                    "gives {} Ohm per phase, above the 1 MOhm this engine handles",
                    fmt(x)
                ),
            ));
        }
    }

    // ---- cross-field: what the bridge can deliver
    let v_ph_peak = SQRT_2 * sup.v_ll_rms_v / 3f64.sqrt();
    let mags: Vec<f64> = (0..3)
        .map(|k| {
            if sup.phase_open[k] {
                0.0
            } else {
                sup.phase_magnitude_pu[k]
            }
        })
        .collect();
    // Fundamental phasors of the live phases (a, b, c at 0, -120, +120 degrees
    // plus their offsets); the largest line-to-line peak is the largest
    // |V_i - V_j|.  Harmonics are counted at their full value on top.
    let ph: Vec<(f64, f64)> = (0..3)
        .map(|k| {
            let ang = (-120.0 * k as f64 + sup.phase_angle_offset_deg[k]).to_radians();
            (mags[k] * ang.cos(), mags[k] * ang.sin())
        })
        .collect();
    let mut line_pu: f64 = 0.0;
    for i in 0..3 {
        for j in 0..3 {
            if i != j && mags[i] > 0.0 && mags[j] > 0.0 {
                line_pu = line_pu.max((ph[i].0 - ph[j].0).hypot(ph[i].1 - ph[j].1));
            }
        }
    }
    let phase_pu = mags.iter().cloned().fold(0.0, f64::max);
    // Highest EMF peak between the bus rails.
    let n_series_bridges = if b.kind == BridgeKind::TwelvePulseSeries {
        2.0
    } else {
        1.0
    };
    let (v_peak_max, n_th) = if three_pulse {
        (v_ph_peak * (phase_pu + harm_sum_pu), 1.0)
    } else {
        (
            n_series_bridges * v_ph_peak * (line_pu + 2.0 * harm_sum_pu),
            2.0 * n_series_bridges,
        )
    };
    let v_drop_th = n_th * b.v_threshold_v;
    if v_peak_max <= v_drop_th {
        return Err(fe(
            "bridge.v_threshold_v",
            format!(
                "the device thresholds ({} V in series) exceed the highest supply voltage the bridge sees ({} V)",
                fmt(v_drop_th),
                fmt(v_peak_max)
            ),
        ));
    }
    if let DcLoad::Rle { e_v, .. } = &dc.load {
        let e = *e_v;
        if e + v_drop_th >= v_peak_max {
            return Err(fe(
                "dc.load.e_v",
                format!(
                    "the back-EMF ({} V) plus the device thresholds ({} V) is at or above the highest voltage the bridge can apply ({} V): no current can flow",
                    fmt(e),
                    fmt(v_drop_th),
                    fmt(v_peak_max)
                ),
            ));
        }
        let balanced = n_open == 0
            && sup.harmonics.iter().all(|h| h.magnitude_pct == 0.0)
            && sup.phase_magnitude_pu.iter().all(|&m| m == 1.0)
            && sup.phase_angle_offset_deg.iter().all(|&o| o == 0.0);
        if b.kind.is_controlled() && balanced {
            let lo = b.alpha_deg - 60.0;
            let hi = lo + b.gate_width_deg;
            // Highest voltage a start from zero current can see: the phase
            // EMF while a three-pulse gate is on, the line-to-line EMF across
            // a pair of six-pulse devices while both gates are on (none when
            // no two gates are ever on together).
            let best_v = if three_pulse {
                Some(v_ph_peak * cos_window_max(lo, hi))
            } else {
                six_pulse_pair_max_pu(b.alpha_deg, b.gate_width_deg)
                    .map(|pu| SQRT_2 * sup.v_ll_rms_v * pu)
            };
            // Continuous conduction (a device turns on against the one it
            // relieves, not against E) needs the ideal average
            // `Vdo cos(alpha)` above E; overlap and resistance only lower it.
            let vdo = if three_pulse {
                3.0 * SQRT_2 / (2.0 * PI) * sup.v_ll_rms_v
            } else {
                3.0 * SQRT_2 / PI * sup.v_ll_rms_v
            };
            let v_cont = vdo * b.alpha_deg.to_radians().cos();
            let e_th = e + v_drop_th;
            if best_v.is_none_or(|v| e_th >= v) && e_th >= v_cont {
                let start = match best_v {
                    Some(v) if three_pulse => format!(
                        "the highest phase voltage while a gate is on is {} V",
                        fmt(v)
                    ),
                    Some(v) => format!(
                        "the highest line-to-line voltage across two devices gated at once is {} V",
                        fmt(v)
                    ),
                    None => "no two devices are gated at once (a gate under 60 degrees), so no start from zero current".to_string(),
                };
                return Err(fe(
                    "bridge.alpha_deg",
                    format!(
                        "at alpha = {} degrees (gate {} degrees wide) {start}, and the ideal average for continuous current, Vdo cos(alpha) = {} V, is not above the back-EMF plus thresholds ({} V) either: the thyristors can never conduct. Reduce alpha or the back-EMF{}",
                        fmt(b.alpha_deg),
                        fmt(b.gate_width_deg),
                        fmt(v_cont),
                        fmt(e_th),
                        if best_v.is_none() { ", or widen the gate" } else { "" }
                    ),
                ));
            }
        }
    }
    if let DcLoad::ConstantPower { p_w } = &dc.load {
        let w = d.omega_rad_s;
        let l = d.l_source_h + d.l_reactor_h;
        let r_line = d.r_source_ohm + d.r_reactor_ohm + b.r_slope_ohm;
        let r_dc = dc.choke_r_ohm
            + if dc.precharge_stuck {
                dc.precharge_r_ohm
            } else {
                0.0
            };
        let k = if three_pulse {
            3.0 * w * l / (2.0 * PI) + r_line + r_dc
        } else {
            n_series_bridges * (3.0 * w * l / PI + 2.0 * r_line) + r_dc
        };
        let v = v_peak_max - v_drop_th;
        if k > 0.0 {
            let p_max = v * v / (4.0 * k);
            if *p_w > p_max {
                // With a failed bypass the resistor left in circuit is the
                // cause: name it, not the load.
                if dc.precharge_stuck && dc.precharge_r_ohm > 0.0 {
                    return Err(fe(
                        "dc.precharge_stuck",
                        format!(
                            "with the bypass failed, the {} Ohm precharge resistor stays in circuit and lets through at most about {} W; the {} W load would collapse the bus (that is what a drive with a failed bypass does: it trips on undervoltage or burns the resistor)",
                            fmt(dc.precharge_r_ohm),
                            fmt(p_max),
                            fmt(*p_w)
                        ),
                    ));
                }
                return Err(fe(
                    "dc.load.p_w",
                    format!(
                        "{} W is more than this source can deliver through its impedance (at most about {} W for this supply and impedance): the bus would collapse",
                        fmt(*p_w),
                        fmt(p_max)
                    ),
                ));
            }
        }
    }
    if dc.precharge_bypass_pu >= 1.0 {
        warn.push("dc.precharge_bypass_pu: the bus rarely reaches the peak line voltage; the bypass may never close by voltage".into());
    }
    Ok(warn)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A constant-power load more than 1.5 times the stated rating is
    /// warned (naming the field), one at the limit is not, and without a
    /// stated rating (taken from the load) there is nothing to compare.
    #[test]
    fn a_load_far_past_the_rating_is_warned() {
        let mut s = Scenario::default();
        assert_eq!(s.analysis.rated_power_w, 45e3);
        s.dc.load = DcLoad::ConstantPower { p_w: 90e3 };
        let w = validate(&s).unwrap();
        assert!(
            w.iter()
                .any(|x| x.starts_with("dc.load.p_w:") && x.contains("2.0 times the rating")),
            "{w:?}"
        );
        s.dc.load = DcLoad::ConstantPower { p_w: 67.5e3 };
        assert!(!validate(&s)
            .unwrap()
            .iter()
            .any(|x| x.contains("times the rating")));
        s.dc.load = DcLoad::ConstantPower { p_w: 90e3 };
        s.analysis.rated_power_w = 0.0;
        assert!(!validate(&s)
            .unwrap()
            .iter()
            .any(|x| x.contains("times the rating")));
    }

    #[test]
    fn defaults_and_examples_pass() {
        assert!(validate(&Scenario::default()).is_ok());
        for (name, s) in crate::examples::all() {
            assert!(validate(&s).is_ok(), "{name}");
        }
    }

    #[test]
    fn window_maxima() {
        // alpha = 0, 120-degree gates: each pair shares 60 degrees from
        // alpha - 60 on, where the pair voltage is cos(alpha - 30) = cos(-30)
        // rising to its peak at alpha - 30: 1.
        assert!((six_pulse_pair_max_pu(0.0, 120.0).unwrap() - 1.0).abs() < 1e-12);
        // alpha = 90, 70-degree gates: 10 shared degrees, cos(60) falling to
        // cos(70).
        assert!(
            (six_pulse_pair_max_pu(90.0, 70.0).unwrap() - (60f64).to_radians().cos()).abs() < 1e-12
        );
        // alpha = 127, 72 degrees: the pair voltage is negative throughout.
        let m = six_pulse_pair_max_pu(127.0, 72.0).unwrap();
        assert!((m - (97f64).to_radians().cos()).abs() < 1e-12, "{m}");
        // Exactly 60 degrees: the pairs meet at one instant.
        assert!(
            (six_pulse_pair_max_pu(45.0, 60.0).unwrap() - (15f64).to_radians().cos()).abs() < 1e-12
        );
        // Under 60 degrees no two gates are on together.
        assert_eq!(six_pulse_pair_max_pu(60.0, 30.0), None);
        assert!((cos_window_max(60.0, 90.0) - 0.5).abs() < 1e-12);
        assert!((cos_window_max(-10.0, 10.0) - 1.0).abs() < 1e-12);
        assert!((cos_window_max(350.0, 370.0) - 1.0).abs() < 1e-12);
        assert!((cos_window_max(170.0, 200.0) + (20f64).to_radians().cos()).abs() < 1e-12);
    }

    /// [`six_pulse_pair_max_pu`] against a brute-force scan of the six
    /// gate signals and the three phase EMFs over a period.
    #[test]
    fn pair_maxima_match_a_scan() {
        let gate_start = |dev: usize, alpha: f64| -> (usize, bool, f64) {
            // Firing order a+, c-, b+, a-, c+, b- (phase, upper, start).
            let (ph, up) = [
                (0, true),
                (2, false),
                (1, true),
                (0, false),
                (2, true),
                (1, false),
            ][dev];
            (ph, up, alpha - 60.0 + 60.0 * dev as f64)
        };
        let on = |start: f64, w: f64, phi: f64| (phi - start).rem_euclid(360.0) <= w;
        let v = |ph: usize, phi: f64| (phi - 120.0 * ph as f64).to_radians().cos();
        for &alpha in &[0.0, 15.0, 30.0, 45.0, 60.0, 90.0, 120.0, 150.0, 179.0] {
            // (60 degrees exactly, where pairs meet at one instant, is
            // checked in `window_maxima`.)
            for &w in &[30.0, 59.0, 61.0, 75.0, 90.0, 120.0, 150.0, 179.0] {
                let mut best: Option<f64> = None;
                for a in 0..6 {
                    for b in 0..6 {
                        let (pa, ua, sa) = gate_start(a, alpha);
                        let (pb, ub, sb) = gate_start(b, alpha);
                        if !(ua && !ub && pa != pb) {
                            continue;
                        }
                        for i in 0..36_000 {
                            let phi = i as f64 / 100.0;
                            if on(sa, w, phi) && on(sb, w, phi) {
                                let x = (v(pa, phi) - v(pb, phi)) / 3f64.sqrt();
                                best = Some(best.map_or(x, |y: f64| y.max(x)));
                            }
                        }
                    }
                }
                let got = six_pulse_pair_max_pu(alpha, w);
                // The scan steps 0.01 degree: within 2e-4 of a window's end.
                match (got, best) {
                    (Some(g), Some(b)) => assert!((g - b).abs() < 2e-4, "{alpha} {w}: {g} {b}"),
                    (None, None) => {}
                    _ => panic!("{alpha} {w}: {got:?} {best:?}"),
                }
            }
        }
    }

    #[test]
    fn back_emf_beyond_the_window_is_refused() {
        let mut s = Scenario::default();
        s.bridge.kind = BridgeKind::SixPulseThyristor;
        s.dc.cap_f = 0.0;
        s.dc.load = DcLoad::Rle {
            r_ohm: 1.0,
            l_h: 0.01,
            e_v: 400.0,
        };
        // 400 V supply: line peak 565.7 V.  At alpha = 150, gates 90 wide:
        // each pair shares 30 degrees, from cos(alpha - 30) = -0.5 falling.
        s.bridge.alpha_deg = 150.0;
        s.bridge.gate_width_deg = 90.0;
        assert_eq!(validate(&s).unwrap_err().field, "bridge.alpha_deg");
        // At alpha = 60 a pair starts at cos(30) = 0.866, 490 V: allowed.
        s.bridge.alpha_deg = 60.0;
        assert!(validate(&s).is_ok());
        // The same with 30-degree gates: no two devices are gated at once
        // and Vdo cos(60) = 270 V < 400 V: refused.
        s.bridge.gate_width_deg = 30.0;
        assert_eq!(validate(&s).unwrap_err().field, "bridge.alpha_deg");
        // At alpha = 20 a bridge already running would carry on
        // (Vdo cos(20) = 508 V): allowed, with the narrow-gate warning.
        s.bridge.alpha_deg = 20.0;
        let w = validate(&s).unwrap();
        assert!(
            w.iter().any(|x| x.starts_with("bridge.gate_width_deg")),
            "{w:?}"
        );
        // Above the line peak nothing can conduct at any alpha.
        s.dc.load = DcLoad::Rle {
            r_ohm: 1.0,
            l_h: 0.01,
            e_v: 600.0,
        };
        assert_eq!(validate(&s).unwrap_err().field, "dc.load.e_v");
    }

    #[test]
    fn faults_that_cannot_combine() {
        let mut s = Scenario::default();
        s.supply.phase_open = [true, true, true];
        assert_eq!(validate(&s).unwrap_err().field, "supply.phase_open");
        s.supply.phase_open = [true, false, true];
        assert_eq!(validate(&s).unwrap_err().field, "supply.phase_open");
        s.supply.phase_open = [false, true, false];
        s.bridge.open_device = Some(4); // b-
        let e = validate(&s).unwrap_err();
        assert_eq!(e.field, "bridge.open_device");
        assert!(e.reason.contains("phase b"), "{e}");
        s.bridge.open_device = Some(3); // a-
        assert!(validate(&s).is_ok());
        s.bridge.open_device = Some(6);
        assert_eq!(validate(&s).unwrap_err().field, "bridge.open_device");
        s.bridge.kind = BridgeKind::TwelvePulseSeries;
        assert!(validate(&s).is_ok());
    }

    #[test]
    fn ranges_name_the_field() {
        let mut s = Scenario::default();
        s.dc.cap_f = 1e-8;
        let e = validate(&s).unwrap_err();
        assert_eq!(e.field, "dc.cap_f");
        assert!(e.reason.contains("1 uF"), "{e}");
        let mut s = Scenario::default();
        s.supply.harmonics.push(crate::scenario::VoltageHarmonic {
            order: 51,
            magnitude_pct: 1.0,
            phase_deg: 0.0,
        });
        assert_eq!(validate(&s).unwrap_err().field, "supply.harmonics.0.order");
        let mut s = Scenario::default();
        s.supply.f_hz = f64::NAN;
        assert_eq!(validate(&s).unwrap_err().field, "supply.f_hz");
    }

    #[test]
    fn power_beyond_the_source_is_refused() {
        let mut s = Scenario::default();
        // 400 V behind 10 MVA: P_max ~ V^2 / (4 k) is tens of MW.
        s.dc.load = DcLoad::ConstantPower { p_w: 1e9 };
        s.analysis.rated_power_w = 45e3;
        assert_eq!(validate(&s).unwrap_err().field, "dc.load.p_w");
    }

    #[test]
    fn a_failed_bypass_that_starves_the_load_names_the_bypass() {
        // 45 kW through a 10 Ohm resistor left in circuit: the resistor
        // alone passes at most V^2 / (4 R) = 540^2 / 40, about 7.3 kW.
        let mut s = Scenario::default();
        s.dc.precharge_r_ohm = 10.0;
        s.dc.precharge_bypass_s = 0.1;
        s.dc.precharge_stuck = true;
        let e = validate(&s).unwrap_err();
        assert_eq!(e.field, "dc.precharge_stuck", "{e}");
        assert!(e.reason.contains("10 Ohm"), "{}", e.reason);
        s.dc.precharge_stuck = false;
        assert!(validate(&s).is_ok());
    }
}
