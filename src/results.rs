//! Results an engineer reads off a rectifier, computed from the exact periodic
//! waveforms of [`crate::sim`]: harmonics, power, DC-side figures, device and
//! component ratings, and the textbook figures beside the exact ones.
//!
//! Definitions (stated here because several are in use in the trade):
//! * THD = sqrt(sum_{h=2}^{h_max} I_h^2) / I_1 over the listed orders; TDD is the
//!   same root-sum-square divided by the demand current IL (IEEE Std 519-2014,
//!   clause 3, "total demand distortion").
//! * Per phase: P = mean(v i) at the supply EMF; S = V_rms I_rms; fundamental
//!   P1 + jQ1 = V1 I1* (phasors at the fundamental); distortion power
//!   D = sqrt(S^2 - P^2 - Q1^2) (the remainder, in the sense of IEEE Std 1459-2010
//!   clause 3.1, without splitting it further); true power factor P / S;
//!   displacement factor cos(angle V1 - angle I1); distortion factor I1 / I_rms.
//! * Totals: P and Q1 are sums; S is the arithmetic sum of the phase S (stated,
//!   because under unbalance it differs from the vector and effective values).
//! * DC ripple RMS = sqrt(V_rms^2 - V_avg^2), what a true-RMS meter on AC reads
//!   (common practice: a meter's AC range blocks the DC part); ripple factor =
//!   ripple RMS / average.

use crate::params::Derived;
use crate::scenario::{BridgeKind, Scenario};
use crate::sim::{Harmonic, Signal, SimResult};
use crate::textbook::TextbookResult;
use serde::{Deserialize, Serialize};
use std::f64::consts::SQRT_2;

/// Harmonic table of one signal.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct HarmonicRow {
    pub order: u32,
    /// RMS, unit of the signal.
    pub rms: f64,
    pub phase_deg: f64,
    /// Percent of the fundamental.
    pub pct_of_fundamental: f64,
}

/// Spectrum of one line current.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CurrentSpectrum {
    pub phase: String,
    pub rms_a: f64,
    pub fundamental_a: f64,
    pub thd_pct: f64,
    /// TDD against the demand current IL, percent.
    pub tdd_pct: f64,
    pub rows: Vec<HarmonicRow>,
}

/// Power figures of one phase (or the total).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct PowerFigures {
    pub phase: String,
    pub p_w: f64,
    pub s_va: f64,
    pub p1_w: f64,
    pub q1_var: f64,
    pub d_va: f64,
    pub power_factor: f64,
    pub displacement_factor: f64,
    pub distortion_factor: f64,
}

/// DC-side figures.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct DcFigures {
    pub v_avg_v: f64,
    pub v_rms_v: f64,
    pub v_min_v: f64,
    pub v_max_v: f64,
    pub ripple_pp_v: f64,
    pub ripple_rms_v: f64,
    pub ripple_factor: f64,
    /// Frequency of the largest ripple component, Hz.
    pub ripple_dominant_hz: f64,
    pub i_avg_a: f64,
    pub i_rms_a: f64,
    /// "continuous" or "discontinuous" (the bridge's DC output current).
    pub conduction: String,
    /// Mean commutation overlap angle, degrees (None when there is no overlap
    /// of two devices of one group).
    pub overlap_deg: Option<f64>,
    /// Extinction (margin) angle of an inverting thyristor bridge,
    /// `gamma = 180 - alpha - mu` in degrees with the simulated mean overlap
    /// (Mohan, Undeland, Robbins, 3rd ed., sec. 6-6, inverter mode; section
    /// number from memory): the time, as an angle, an outgoing thyristor has
    /// to recover before its voltage turns forward.  None unless the bridge
    /// is controlled, returns power (DC power below zero) and commutates.
    pub extinction_deg: Option<f64>,
    /// DC voltage harmonics (order referred to the supply frequency; the
    /// percent column is of the DC average).
    pub v_harmonics: Vec<HarmonicRow>,
    pub p_load_w: f64,
}

/// Ratings of one device.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct DeviceRating {
    pub name: String,
    pub i_avg_a: f64,
    pub i_rms_a: f64,
    pub i_peak_a: f64,
    /// Largest reverse voltage, V.
    pub v_reverse_peak_v: f64,
    /// Largest forward blocking voltage, V.
    pub v_forward_block_peak_v: f64,
    /// `V_th I_avg + r I_rms^2`, W.
    pub conduction_loss_w: f64,
    /// True when the device is set open (a fault).
    pub open: bool,
    /// The device never stops conducting: its current stays above 0.1 % of
    /// its peak over the whole period.  In a line-commutated bridge each
    /// device conducts for at most 120 degrees plus the overlap (a
    /// three-pulse one likewise), so this means the bridge short-circuits
    /// its DC side: a commutation failure, or more DC current than the
    /// source inductance lets it commutate.
    pub conducts_whole_period: bool,
}

/// Capacitor ripple and life.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CapacitorFigures {
    pub i_rms_a: f64,
    /// Ripple current by frequency (order of the supply frequency; the percent
    /// column is of the capacitor's RMS current).
    pub by_order: Vec<HarmonicRow>,
    pub esr_loss_w: f64,
    pub temp_rise_k: f64,
    pub core_temp_c: f64,
    /// Rule of thumb: life doubles for each 10 K below the rated temperature;
    /// 0 when the core is above the rated temperature (`over_rating`).
    pub life_estimate_h: f64,
    /// The core temperature is above the capacitor's rated temperature.
    pub over_rating: bool,
    pub note: String,
}

/// One textbook figure beside the exact one.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Comparison {
    pub quantity: String,
    pub unit: String,
    pub textbook: f64,
    pub exact: f64,
    /// (exact - textbook) / |textbook| in percent; None when the textbook
    /// value is zero (or within 1e-9 of the exact one's size), where a
    /// percentage says nothing.
    pub diff_pct: Option<f64>,
    pub assumption: String,
}

/// Component and supply ratings.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Ratings {
    pub devices: Vec<DeviceRating>,
    /// Worst reverse/blocking voltage over all devices, V.
    pub worst_device_voltage_v: f64,
    /// Suggested module voltage class, V, and the margin over the peak line voltage.
    pub suggested_voltage_class_v: f64,
    pub voltage_class_margin: f64,
    /// The suggested class over the worst device voltage simulated (0 when
    /// no device sees a voltage).
    pub voltage_class_over_worst: f64,
    pub voltage_class_note: String,
    pub total_conduction_loss_w: f64,
    pub reactor_i_rms_a: f64,
    pub reactor_i_peak_a: f64,
    pub choke_i_rms_a: Option<f64>,
    pub choke_i_peak_a: Option<f64>,
    /// Supply-side apparent power (sum of phase V_rms I_rms at the EMF), VA.
    pub transformer_va: f64,
    /// DC power / transformer VA.
    pub utilisation_factor: f64,
    pub capacitor: Option<CapacitorFigures>,
}

/// Everything derived from one simulation.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Results {
    pub line_currents: Vec<CurrentSpectrum>,
    /// The worst-phase THD and TDD, percent.
    pub thd_max_pct: f64,
    pub tdd_max_pct: f64,
    /// Demand current IL used for TDD, A.
    pub demand_current_a: f64,
    pub power: Vec<PowerFigures>,
    pub total: PowerFigures,
    pub dc: DcFigures,
    pub ratings: Ratings,
    pub comparisons: Vec<Comparison>,
    /// Largest instantaneous |i_a + i_b + i_c| on the grid, A (zero in a
    /// three-wire supply; NaN for the three-pulse bridge, whose neutral carries current).
    pub line_current_sum_max_a: f64,
    /// (AC input - DC load - modelled losses) / AC input: the power balance, close to zero.
    pub power_balance_error: f64,
}

/// DC-side harmonics: percent of the DC average (there is no fundamental).
fn rows_of_dc(h: &[Harmonic], mean: f64) -> Vec<HarmonicRow> {
    h.iter()
        .map(|x| HarmonicRow {
            order: x.order,
            rms: x.rms,
            phase_deg: x.phase_deg,
            pct_of_fundamental: if mean.abs() > 0.0 {
                100.0 * x.rms / mean.abs()
            } else {
                0.0
            },
        })
        .collect()
}

/// The bus capacitor's ESR loss, temperatures and life at a ripple current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapThermal {
    /// ESR loss `ESR I^2`, W.
    pub loss: f64,
    /// Core rise over ambient `loss Rth`, K.
    pub rise: f64,
    /// Core temperature, °C.
    pub core: f64,
    /// The core above the rated (category) temperature.
    pub over_rating: bool,
    /// Life estimate, h (0 when over its rating).
    pub life: f64,
}

/// [`CapThermal`] of the scenario's bank at the ripple current `i_rms_a`:
/// loss `ESR I^2`, core `ambient + loss Rth`, and the life by the rule of
/// thumb that life doubles for every 10 K below the rated temperature
/// (common practice for aluminium electrolytics; the maker's data governs).
pub fn capacitor_thermal(s: &Scenario, i_rms_a: f64) -> CapThermal {
    let esr = s.dc.cap_esr_ohm.max(0.0);
    let loss = esr * i_rms_a * i_rms_a;
    let rise = loss * s.dc.cap_rth_k_per_w.max(0.0);
    let core = s.dc.ambient_c + rise;
    // Above its rated (category) temperature a capacitor is outside its
    // data sheet: no life is promised there, so none is extrapolated.
    let over_rating = core > s.dc.cap_rated_temp_c;
    let life = if over_rating {
        0.0
    } else {
        s.dc.cap_rated_life_h * 2f64.powf((s.dc.cap_rated_temp_c - core) / 10.0)
    };
    CapThermal {
        loss,
        rise,
        core,
        over_rating,
        life,
    }
}

/// A harmonic order's RMS in percent of the fundamental (the first entry),
/// as the rows of [`CurrentSpectrum`] give it; 0 when the order is not there.
pub fn order_pct(h: &[Harmonic], order: u32) -> f64 {
    let i1 = h.first().map(|x| x.rms).unwrap_or(0.0);
    match h.iter().find(|x| x.order == order) {
        Some(x) if i1 > 0.0 => 100.0 * x.rms / i1,
        _ => 0.0,
    }
}

fn rows(h: &[Harmonic]) -> Vec<HarmonicRow> {
    let i1 = h.first().map(|x| x.rms).unwrap_or(0.0);
    h.iter()
        .map(|x| HarmonicRow {
            order: x.order,
            rms: x.rms,
            phase_deg: x.phase_deg,
            pct_of_fundamental: if i1 > 0.0 { 100.0 * x.rms / i1 } else { 0.0 },
        })
        .collect()
}

/// Standard module voltage classes, V (common practice; the list is from
/// memory of makers' catalogues: classes in steps of 200 V to 1800 V, then
/// wider steps).
pub const VOLTAGE_CLASSES_V: [f64; 16] = [
    200.0, 400.0, 600.0, 800.0, 1000.0, 1200.0, 1400.0, 1600.0, 1800.0, 2000.0, 2200.0, 2500.0,
    2800.0, 3300.0, 4500.0, 6500.0,
];

/// Rule-of-thumb margin on the peak line voltage for the device voltage class
/// (common practice: 2 to 2.5 times; 2.5 is used to choose).
pub const VOLTAGE_CLASS_FACTOR: f64 = 2.5;

/// Demand current IL for TDD, A: the user's IL, else the rated fundamental
/// current (IEEE 519 asks for the maximum demand load current; the rating
/// stands in for it), else the simulated fundamental of phase a.
pub(crate) fn demand_current(s: &Scenario, d: &Derived, sim: &SimResult) -> f64 {
    if s.analysis.demand_current_a > 0.0 {
        s.analysis.demand_current_a
    } else if d.rated_current_a > 0.0 {
        d.rated_current_a
    } else {
        sim.signals[sim.roles.line_i[0]]
            .harmonics
            .first()
            .map(|h| h.rms)
            .unwrap_or(1.0)
    }
}

/// A line current's fundamental (A), THD and TDD against `demand` (percent),
/// as defined at the top of this file.
pub(crate) fn line_distortion(si: &Signal, demand: f64) -> (f64, f64, f64) {
    let i1 = si.harmonics.first().map(|h| h.rms).unwrap_or(0.0);
    let hsum: f64 = si
        .harmonics
        .iter()
        .skip(1)
        .map(|h| h.rms * h.rms)
        .sum::<f64>()
        .sqrt();
    let thd = if i1 > 1e-9 * demand {
        100.0 * hsum / i1
    } else {
        0.0
    };
    (i1, thd, 100.0 * hsum / demand)
}

/// Power figures of each phase at the EMF, and the total (definitions at
/// the top of this file).
pub(crate) fn power_figures(sim: &SimResult) -> (Vec<PowerFigures>, PowerFigures) {
    let r = &sim.roles;
    let sig = |i: usize| &sim.signals[i];
    let names = ["a", "b", "c"];
    let mut power = Vec::new();
    let (mut tp, mut ts, mut tp1, mut tq1) = (0.0, 0.0, 0.0, 0.0);
    for k in 0..3 {
        let v = sig(r.phase_v[k]);
        let i = sig(r.line_i[k]);
        let (v1, i1) = (&v.harmonics[0], &i.harmonics[0]);
        let phi = (v1.phase_deg - i1.phase_deg).to_radians();
        let p = sim.p_phase_w[k];
        let s_va = v.rms * i.rms;
        let p1 = v1.rms * i1.rms * phi.cos();
        let q1 = v1.rms * i1.rms * phi.sin();
        let d_va = (s_va * s_va - p * p - q1 * q1).max(0.0).sqrt();
        tp += p;
        ts += s_va;
        tp1 += p1;
        tq1 += q1;
        power.push(PowerFigures {
            phase: names[k].into(),
            p_w: p,
            s_va,
            p1_w: p1,
            q1_var: q1,
            d_va,
            power_factor: if s_va > 0.0 { p / s_va } else { 0.0 },
            displacement_factor: if i1.rms > 0.0 { phi.cos() } else { 0.0 },
            distortion_factor: if i.rms > 0.0 { i1.rms / i.rms } else { 0.0 },
        });
    }
    let s1_tot = (tp1 * tp1 + tq1 * tq1).sqrt();
    let i_rms_tot: f64 = (0..3).map(|k| sig(r.line_i[k]).rms).sum();
    let i1_tot: f64 = (0..3).map(|k| sig(r.line_i[k]).harmonics[0].rms).sum();
    let total = PowerFigures {
        phase: "total".into(),
        p_w: tp,
        s_va: ts,
        p1_w: tp1,
        q1_var: tq1,
        d_va: (ts * ts - tp * tp - tq1 * tq1).max(0.0).sqrt(),
        power_factor: if ts > 0.0 { tp / ts } else { 0.0 },
        displacement_factor: if s1_tot > 0.0 { tp1 / s1_tot } else { 0.0 },
        distortion_factor: if i_rms_tot > 0.0 {
            i1_tot / i_rms_tot
        } else {
            0.0
        },
    };
    (power, total)
}

/// The DC bus ripple: its RMS (the definition at the top of this file) and
/// the frequency of its largest harmonic, Hz (`f_hz` the supply's).
pub(crate) fn ripple(v: &Signal, f_hz: f64) -> (f64, f64) {
    let ripple_rms = (v.rms * v.rms - v.mean * v.mean).max(0.0).sqrt();
    let dom = v
        .harmonics
        .iter()
        .max_by(|a, b| a.rms.total_cmp(&b.rms))
        .map(|h| h.order as f64 * f_hz)
        .unwrap_or(0.0);
    (ripple_rms, dom)
}

/// Every device's ratings, and the worst reverse or blocking voltage over
/// them, V.
pub(crate) fn device_ratings(s: &Scenario, sim: &SimResult) -> (Vec<DeviceRating>, f64) {
    let sig = |i: usize| &sim.signals[i];
    let v_th = s.bridge.v_threshold_v.max(0.0);
    let r_on = s.bridge.r_slope_ohm.max(0.0);
    let mut devices = Vec::new();
    for (n, &(ip, vp)) in sim.roles.devices.iter().enumerate() {
        let ci = sig(ip);
        let cv = sig(vp);
        let open = s.bridge.open_device == Some(n);
        let i_rms = if open { 0.0 } else { ci.rms };
        let i_avg = if open { 0.0 } else { ci.mean };
        devices.push(DeviceRating {
            name: sim.device_names[n].clone(),
            i_avg_a: i_avg,
            i_rms_a: i_rms,
            i_peak_a: if open { 0.0 } else { ci.max },
            v_reverse_peak_v: (-cv.min).max(0.0),
            // Forward blocking is a thyristor rating; a diode's forward voltage is its on-state drop.
            v_forward_block_peak_v: if s.bridge.kind.is_controlled() {
                cv.max.max(0.0)
            } else {
                0.0
            },
            conduction_loss_w: v_th * i_avg + r_on * i_rms * i_rms,
            open,
            conducts_whole_period: !open && ci.max > 0.0 && ci.min > 1e-3 * ci.max,
        });
    }
    let worst_v = devices
        .iter()
        .map(|x| {
            x.v_reverse_peak_v.max(if s.bridge.kind.is_controlled() {
                x.v_forward_block_peak_v
            } else {
                0.0
            })
        })
        .fold(0.0, f64::max);
    (devices, worst_v)
}

/// Compute the results.
pub fn compute(s: &Scenario, d: &Derived, sim: &SimResult, tb: &TextbookResult) -> Results {
    let r = &sim.roles;
    let sig = |i: usize| &sim.signals[i];
    let f = s.supply.f_hz;
    let names = ["a", "b", "c"];
    let demand = demand_current(s, d, sim);
    let mut line_currents = Vec::new();
    for k in 0..3 {
        let si = sig(r.line_i[k]);
        let (i1, thd_pct, tdd_pct) = line_distortion(si, demand);
        line_currents.push(CurrentSpectrum {
            phase: names[k].into(),
            rms_a: si.rms,
            fundamental_a: i1,
            thd_pct,
            tdd_pct,
            rows: rows(&si.harmonics),
        });
    }
    let thd_max_pct = line_currents.iter().map(|c| c.thd_pct).fold(0.0, f64::max);
    let tdd_max_pct = line_currents.iter().map(|c| c.tdd_pct).fold(0.0, f64::max);

    // Power per phase at the EMF.
    let (power, total) = power_figures(sim);
    let (tp, ts) = (total.p_w, total.s_va);

    // DC side.
    let v = sig(r.v_dc);
    let i = sig(r.i_dc);
    let (ripple_rms, dom) = ripple(v, f);
    let i_floor = 1e-4 * i.rms.max(1e-12);
    let conduction = if i.min > i_floor {
        "continuous"
    } else {
        "discontinuous"
    };
    let mut dc = DcFigures {
        v_avg_v: v.mean,
        v_rms_v: v.rms,
        v_min_v: v.min,
        v_max_v: v.max,
        ripple_pp_v: v.max - v.min,
        ripple_rms_v: ripple_rms,
        ripple_factor: if v.mean.abs() > 0.0 {
            ripple_rms / v.mean.abs()
        } else {
            0.0
        },
        ripple_dominant_hz: dom,
        i_avg_a: i.mean,
        i_rms_a: i.rms,
        conduction: conduction.into(),
        overlap_deg: overlap_deg(sim),
        extinction_deg: None,
        v_harmonics: rows_of_dc(&v.harmonics, v.mean),
        p_load_w: sim.p_load_w,
    };

    // Devices.
    let (devices, worst_v) = device_ratings(s, sim);
    let shorted = devices.iter().any(|d| d.conducts_whole_period);
    if s.bridge.kind.is_controlled() && sim.p_load_w < 0.0 && !shorted {
        let mu = dc.overlap_deg.unwrap_or(0.0);
        dc.extinction_deg = Some(180.0 - s.bridge.alpha_deg - mu);
    }
    let peak_line = SQRT_2
        * s.supply.v_ll_rms_v
        * s.supply
            .phase_magnitude_pu
            .iter()
            .cloned()
            .fold(1.0, f64::max);
    let need = VOLTAGE_CLASS_FACTOR * peak_line.max(worst_v / 1.1);
    let class = VOLTAGE_CLASSES_V
        .iter()
        .cloned()
        .find(|c| *c >= need)
        .unwrap_or(need.ceil());
    let total_loss: f64 = devices.iter().map(|x| x.conduction_loss_w).sum();
    let li = sig(r.line_i[0]);
    let (choke_rms, choke_peak) = match r.i_choke {
        Some(c) => (Some(sig(c).rms), Some(sig(c).max.max(-sig(c).min))),
        None => (None, None),
    };
    let transformer_va = ts;
    let p_dc = sim.p_load_w;
    let capacitor = r.i_cap.map(|c| {
        let ic = sig(c);
        let CapThermal {
            loss,
            rise,
            core,
            over_rating,
            life,
        } = capacitor_thermal(s, ic.rms);
        CapacitorFigures {
            i_rms_a: ic.rms,
            // Percent of the capacitor's RMS current (there is no fundamental to refer to).
            by_order: rows_of_dc(&ic.harmonics, ic.rms).into_iter().filter(|h| h.rms > 1e-6 * ic.rms.max(1e-12)).collect(),
            esr_loss_w: loss,
            temp_rise_k: rise,
            core_temp_c: core,
            life_estimate_h: life,
            over_rating,
            note: if over_rating {
                format!(
                    "OVERLOADED: the core would reach {core:.0} °C, above the rated {:.0} °C; the ripple current is too much for this ESR and cooling, and no life is given (shown as 0). Check the capacitance and ESR (an aged bank reads low C, high ESR), the ripple current rating and the cooling; the maker's data governs",
                    s.dc.cap_rated_temp_c
                )
            } else {
                "rule of thumb: life doubles for every 10 K below the rated temperature; ESR taken as constant over frequency; the maker's data governs".into()
            },
        }
    });
    let ratings = Ratings {
        devices,
        worst_device_voltage_v: worst_v,
        suggested_voltage_class_v: class,
        voltage_class_margin: class / peak_line,
        voltage_class_over_worst: if worst_v > 0.0 { class / worst_v } else { 0.0 },
        voltage_class_note: format!(
            "common practice: about 2 to 2.5 x the peak line voltage ({:.0} V), rounded up to a standard class",
            peak_line
        ),
        total_conduction_loss_w: total_loss,
        reactor_i_rms_a: li.rms,
        reactor_i_peak_a: li.max.max(-li.min),
        choke_i_rms_a: choke_rms,
        choke_i_peak_a: choke_peak,
        transformer_va,
        utilisation_factor: if transformer_va > 0.0 { p_dc / transformer_va } else { 0.0 },
        capacitor,
    };
    let comparisons = compare(tb, &line_currents, &total, &dc, &ratings);
    let line_current_sum_max_a = if s.bridge.kind == BridgeKind::ThreePulseDiode
        || s.bridge.kind == BridgeKind::ThreePulseThyristor
    {
        f64::NAN
    } else {
        (0..sim.t_s.len())
            .map(|j| {
                (0..3)
                    .map(|k| sig(r.line_i[k]).samples[j])
                    .sum::<f64>()
                    .abs()
            })
            .fold(0.0, f64::max)
    };
    Results {
        line_currents,
        thd_max_pct,
        tdd_max_pct,
        demand_current_a: demand,
        power,
        total,
        dc,
        ratings,
        comparisons,
        line_current_sum_max_a,
        power_balance_error: if tp.abs() > 0.0 {
            (tp - sim.p_load_w - sim.p_loss_w) / tp.abs()
        } else {
            0.0
        },
    }
}

/// Mean overlap: for each turn-on of a device, the time until another device
/// of the same group (upper or lower, same bridge) turns off, when that comes
/// within 60 degrees.
pub(crate) fn overlap_deg(sim: &SimResult) -> Option<f64> {
    let t = sim.period_s;
    let group = |name: &str| -> (char, String) {
        let last = name.chars().last().unwrap_or('+');
        (last, name[1..name.len() - 1].to_string())
    };
    let mut sum = 0.0;
    let mut n = 0;
    for (i, e) in sim.events.iter().enumerate() {
        if !e.on || !sim.device_names.contains(&e.device) {
            continue;
        }
        let g = group(&e.device);
        for k in 1..sim.events.len() {
            let o = &sim.events[(i + k) % sim.events.len()];
            let dt = (o.t_s - e.t_s).rem_euclid(t);
            if dt > t / 6.0 {
                break;
            }
            if !o.on
                && o.device != e.device
                && group(&o.device) == g
                && sim.device_names.contains(&o.device)
            {
                sum += dt;
                n += 1;
                break;
            }
        }
    }
    if n == 0 {
        None
    } else {
        Some(sum / n as f64 / t * 360.0)
    }
}

fn cmp(q: &str, unit: &str, tb: f64, ex: f64, assumption: &str) -> Comparison {
    Comparison {
        quantity: q.into(),
        unit: unit.into(),
        textbook: tb,
        exact: ex,
        diff_pct: if tb.abs() > 1e-9 * ex.abs().max(1e-300) {
            Some(100.0 * (ex - tb) / tb.abs())
        } else {
            None
        },
        assumption: assumption.into(),
    }
}

fn compare(
    tb: &TextbookResult,
    lc: &[CurrentSpectrum],
    total: &PowerFigures,
    dc: &DcFigures,
    ratings: &Ratings,
) -> Vec<Comparison> {
    let ripple_free = "assumes a ripple-free DC current and a balanced sinusoidal supply";
    let mut out = vec![
        cmp(
            "DC voltage (average)",
            "V",
            tb.vd_v,
            dc.v_avg_v,
            "Vdo cos(alpha) minus the commutation drop; assumes a ripple-free DC current (no capacitor bus), balanced sinusoidal supply",
        ),
        cmp("line current RMS", "A", tb.line_rms_a, lc[0].rms_a, "assumes ripple-free DC current and no overlap"),
        cmp(
            "line current fundamental",
            "A",
            tb.line_fundamental_a,
            lc[0].fundamental_a,
            "assumes ripple-free DC current and no overlap",
        ),
        cmp("line current THD", "%", tb.thd_pct, lc[0].thd_pct, "assumes ripple-free DC current and no overlap (textbook: all orders; exact: to h_max)"),
        cmp("displacement factor", "", tb.displacement_factor, total.displacement_factor, "cos(alpha + mu/2); assumes ripple-free DC current"),
        cmp("power factor", "", tb.power_factor, total.power_factor, ripple_free),
        cmp(
            "device peak reverse voltage",
            "V",
            tb.device_piv_v,
            ratings.devices.iter().map(|d| d.v_reverse_peak_v).fold(0.0, f64::max),
            "sqrt2 V_LL: assumes a sinusoidal supply without commutation notches or transients",
        ),
    ];
    if let Some(mu) = tb.overlap_rad {
        if let Some(ex) = dc.overlap_deg {
            out.push(cmp(
                "overlap angle",
                "deg",
                mu.to_degrees(),
                ex,
                "assumes a ripple-free DC current",
            ));
        }
    }
    let dev_rms = ratings
        .devices
        .iter()
        .filter(|d| !d.open)
        .map(|d| d.i_rms_a)
        .fold(0.0, f64::max);
    out.push(cmp(
        "device RMS current (largest)",
        "A",
        tb.device_rms_a,
        dev_rms,
        "bridge DC current / sqrt3: each device carries 120-degree blocks of a ripple-free current",
    ));
    out
}
