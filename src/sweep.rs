//! Sweeps: any scenario field varied over a range, with the headline results
//! at each point, and the headline summary of one analysis.

use crate::analysis::{prepare, Analysis, Prepared};
use crate::params::Derived;
use crate::results;
use crate::scenario::Scenario;
use crate::sim::{SimResult, WarmStart};
use crate::textbook::TextbookResult;
use serde::{Deserialize, Serialize};

/// Headline figures of one analysis (what a user checks first).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
pub struct Summary {
    pub v_dc_avg_v: f64,
    pub v_dc_ripple_pp_v: f64,
    pub v_dc_ripple_rms_v: f64,
    pub ripple_dominant_hz: f64,
    pub i_dc_avg_a: f64,
    pub i_line_rms_a: f64,
    pub i_line_fundamental_a: f64,
    pub thd_max_pct: f64,
    pub tdd_max_pct: f64,
    pub power_factor: f64,
    pub displacement_factor: f64,
    pub p_in_w: f64,
    pub p_dc_w: f64,
    pub overlap_deg: f64,
    pub device_i_peak_a: f64,
    pub device_i_rms_a: f64,
    pub device_v_peak_v: f64,
    pub cap_i_rms_a: f64,
    /// Textbook DC voltage beside the exact one, V.
    pub textbook_v_dc_v: f64,
}

/// Field names of [`Summary`] in order (CSV header).
pub const SUMMARY_FIELDS: [&str; 19] = [
    "v_dc_avg_v",
    "v_dc_ripple_pp_v",
    "v_dc_ripple_rms_v",
    "ripple_dominant_hz",
    "i_dc_avg_a",
    "i_line_rms_a",
    "i_line_fundamental_a",
    "thd_max_pct",
    "tdd_max_pct",
    "power_factor",
    "displacement_factor",
    "p_in_w",
    "p_dc_w",
    "overlap_deg",
    "device_i_peak_a",
    "device_i_rms_a",
    "device_v_peak_v",
    "cap_i_rms_a",
    "textbook_v_dc_v",
];

impl Summary {
    pub fn values(&self) -> [f64; 19] {
        [
            self.v_dc_avg_v,
            self.v_dc_ripple_pp_v,
            self.v_dc_ripple_rms_v,
            self.ripple_dominant_hz,
            self.i_dc_avg_a,
            self.i_line_rms_a,
            self.i_line_fundamental_a,
            self.thd_max_pct,
            self.tdd_max_pct,
            self.power_factor,
            self.displacement_factor,
            self.p_in_w,
            self.p_dc_w,
            self.overlap_deg,
            self.device_i_peak_a,
            self.device_i_rms_a,
            self.device_v_peak_v,
            self.cap_i_rms_a,
            self.textbook_v_dc_v,
        ]
    }
}

/// Summarise an analysis; `None` when the simulation failed.
pub fn summarize(a: &Analysis) -> Option<Summary> {
    let r = a.results.as_ref()?;
    let lc = r.line_currents.iter().fold((0.0f64, 0.0f64), |m, c| {
        (m.0.max(c.rms_a), m.1.max(c.fundamental_a))
    });
    Some(Summary {
        v_dc_avg_v: r.dc.v_avg_v,
        v_dc_ripple_pp_v: r.dc.ripple_pp_v,
        v_dc_ripple_rms_v: r.dc.ripple_rms_v,
        ripple_dominant_hz: r.dc.ripple_dominant_hz,
        i_dc_avg_a: r.dc.i_avg_a,
        i_line_rms_a: lc.0,
        i_line_fundamental_a: lc.1,
        thd_max_pct: r.thd_max_pct,
        tdd_max_pct: r.tdd_max_pct,
        power_factor: r.total.power_factor,
        displacement_factor: r.total.displacement_factor,
        p_in_w: r.total.p_w,
        p_dc_w: r.dc.p_load_w,
        overlap_deg: r.dc.overlap_deg.unwrap_or(0.0),
        device_i_peak_a: r
            .ratings
            .devices
            .iter()
            .map(|d| d.i_peak_a)
            .fold(0.0, f64::max),
        device_i_rms_a: r
            .ratings
            .devices
            .iter()
            .map(|d| d.i_rms_a)
            .fold(0.0, f64::max),
        device_v_peak_v: r.ratings.worst_device_voltage_v,
        cap_i_rms_a: r
            .ratings
            .capacitor
            .as_ref()
            .map(|c| c.i_rms_a)
            .unwrap_or(0.0),
        textbook_v_dc_v: a.textbook.vd_v,
    })
}

/// [`summarize`] of the analysis of `s` whose simulation is `sim`, computed
/// from the simulation alone (no `results::compute`, no compliance), with
/// the same functions and in the same order, so the same to the bit (a
/// sweep point's simulation may be `sim::Outputs::Summary`: what is read
/// here is what that keeps; `tests/sweep_lean.rs` checks both).
fn summary_of(s: &Scenario, d: &Derived, sim: &SimResult, tb: &TextbookResult) -> Summary {
    let r = &sim.roles;
    let sig = |i: usize| &sim.signals[i];
    let demand = results::demand_current(s, d, sim);
    // Folded as `summarize` folds `results.line_currents`.
    let (mut lc, mut thd_max, mut tdd_max) = ((0.0f64, 0.0f64), 0.0f64, 0.0f64);
    for &k in &r.line_i {
        let si = sig(k);
        let (i1, thd, tdd) = results::line_distortion(si, demand);
        lc = (lc.0.max(si.rms), lc.1.max(i1));
        thd_max = f64::max(thd_max, thd);
        tdd_max = f64::max(tdd_max, tdd);
    }
    let (_, total) = results::power_figures(sim);
    let v = sig(r.v_dc);
    let (ripple_rms, dom) = results::ripple(v, s.supply.f_hz);
    let (devices, worst_v) = results::device_ratings(s, sim);
    Summary {
        v_dc_avg_v: v.mean,
        v_dc_ripple_pp_v: v.max - v.min,
        v_dc_ripple_rms_v: ripple_rms,
        ripple_dominant_hz: dom,
        i_dc_avg_a: sig(r.i_dc).mean,
        i_line_rms_a: lc.0,
        i_line_fundamental_a: lc.1,
        thd_max_pct: thd_max,
        tdd_max_pct: tdd_max,
        power_factor: total.power_factor,
        displacement_factor: total.displacement_factor,
        p_in_w: total.p_w,
        p_dc_w: sim.p_load_w,
        overlap_deg: results::overlap_deg(sim).unwrap_or(0.0),
        device_i_peak_a: devices.iter().map(|d| d.i_peak_a).fold(0.0, f64::max),
        device_i_rms_a: devices.iter().map(|d| d.i_rms_a).fold(0.0, f64::max),
        device_v_peak_v: worst_v,
        cap_i_rms_a: r.i_cap.map(|c| sig(c).rms).unwrap_or(0.0),
        textbook_v_dc_v: tb.vd_v,
    }
}

/// What a sweep point keeps of the analysis of its scenario.
struct Outcome {
    /// `summarize` of the analysis.
    summary: Option<Summary>,
    /// The analysis's first warning (a failed point's reason).
    first_warning: Option<String>,
    /// The simulation solved.
    solved: bool,
    warm_start: Option<WarmStart>,
}

/// The analysis of `s` (from `warm`) as far as a sweep point shows it:
/// [`prepare`] as in `analyze_from` (the same errors), the simulation with
/// `sim::Outputs::Summary`, and [`summary_of`] instead of the results and
/// the compliance assessment.
fn lean_analysis(s: &Scenario, warm: Option<&WarmStart>) -> Result<Outcome, String> {
    let Prepared {
        mut warnings,
        derived,
        textbook,
        ..
    } = prepare(s).map_err(|e| e.to_string())?;
    Ok(
        match crate::sim::simulate_outputs(s, &derived, warm, crate::sim::Outputs::Summary) {
            Ok(sim) => Outcome {
                summary: Some(summary_of(s, &derived, &sim, &textbook)),
                first_warning: None,
                solved: true,
                warm_start: sim.warm_start,
            },
            Err(e) => {
                // `analyze_from`'s warnings: the input checks', then this.
                warnings.push(format!("simulation: {e}"));
                Outcome {
                    summary: None,
                    first_warning: warnings.into_iter().next(),
                    solved: false,
                    warm_start: None,
                }
            }
        },
    )
}

/// What to vary.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SweepSpec {
    /// Dotted path of a numeric scenario field, e.g. `dc.load.p_w` or
    /// `supply.phase_magnitude_pu.1`.
    pub path: String,
    pub from: f64,
    pub to: f64,
    pub points: usize,
}

/// One point of a sweep.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SweepPoint {
    pub x: f64,
    pub summary: Option<Summary>,
    /// Why this point has no summary.
    pub error: Option<String>,
}

/// Parse `PATH=FROM:TO:N`.
pub fn parse_vary(text: &str) -> Result<SweepSpec, String> {
    let (path, range) = text
        .split_once('=')
        .ok_or("--vary: expected PATH=FROM:TO:N")?;
    let parts: Vec<&str> = range.split(':').collect();
    if parts.len() != 3 {
        return Err("--vary: expected PATH=FROM:TO:N".into());
    }
    let num = |s: &str, what: &str| -> Result<f64, String> {
        s.trim()
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite())
            .ok_or(format!("--vary: {what} is not a number: {s}"))
    };
    let points = parts[2]
        .trim()
        .parse::<usize>()
        .map_err(|_| format!("--vary: N is not a whole number: {}", parts[2]))?;
    if !(1..=10_000).contains(&points) {
        return Err("--vary: N must be between 1 and 10000".into());
    }
    Ok(SweepSpec {
        path: path.trim().to_string(),
        from: num(parts[0], "FROM")?,
        to: num(parts[1], "TO")?,
        points,
    })
}

/// A copy of `s` with the numeric field at `path` set to `value`.
pub fn with_value(s: &Scenario, path: &str, value: f64) -> Result<Scenario, String> {
    let v = serde_json::to_value(s).map_err(|e| e.to_string())?;
    with_value_in(v, path, value)
}

/// The scenario `v` (a serialised [`Scenario`]) with the numeric field at
/// `path` set to `value`.
fn with_value_in(mut v: serde_json::Value, path: &str, value: f64) -> Result<Scenario, String> {
    let mut cur = &mut v;
    for key in path.split('.') {
        cur = match cur {
            serde_json::Value::Object(m) => {
                m.get_mut(key).ok_or(format!("{path}: no field '{key}'"))?
            }
            serde_json::Value::Array(a) => {
                let i: usize = key
                    .parse()
                    .map_err(|_| format!("{path}: '{key}' is not an index"))?;
                a.get_mut(i)
                    .ok_or(format!("{path}: index {i} out of range"))?
            }
            _ => return Err(format!("{path}: '{key}' is not inside an object")),
        };
    }
    match cur {
        serde_json::Value::Number(_) => {}
        _ => return Err(format!("{path}: not a numeric field")),
    }
    let rounded_int = value.round();
    *cur = if cur.is_u64() || cur.is_i64() {
        serde_json::json!(rounded_int as i64)
    } else {
        serde_json::json!(value)
    };
    crate::scenario::from_value(v)
}

/// The floating-point field of `s` at the dotted `path`, when it is one
/// that a sweep sets directly (the numeric fields of `Scenario` that hold a
/// real number, in the variant the scenario has); `None` for others (whole
/// numbers, absent variants, unknown paths), which go through the
/// serialised scenario.  `Sweeper` uses it only where it agrees with
/// [`with_value`].
fn f64_field<'a>(s: &'a mut Scenario, path: &str) -> Option<&'a mut f64> {
    use crate::scenario::{DcLoad, LineReactor, SourceImpedance};
    let keys: Vec<&str> = path.split('.').collect();
    let at = |i: &str| i.parse::<usize>().ok();
    Some(match keys.as_slice() {
        ["supply", "v_ll_rms_v"] => &mut s.supply.v_ll_rms_v,
        ["supply", "f_hz"] => &mut s.supply.f_hz,
        ["supply", "phase_magnitude_pu", i] => s.supply.phase_magnitude_pu.get_mut(at(i)?)?,
        ["supply", "phase_angle_offset_deg", i] => {
            s.supply.phase_angle_offset_deg.get_mut(at(i)?)?
        }
        ["supply", "harmonics", i, f] => {
            let h = s.supply.harmonics.get_mut(at(i)?)?;
            match *f {
                "magnitude_pct" => &mut h.magnitude_pct,
                "phase_deg" => &mut h.phase_deg,
                _ => return None,
            }
        }
        ["source", "impedance", f] => match (&mut s.source.impedance, *f) {
            (SourceImpedance::Direct { r_ohm, .. }, "r_ohm") => r_ohm,
            (SourceImpedance::Direct { l_h, .. }, "l_h") => l_h,
            (SourceImpedance::Transformer { s_kva, .. }, "s_kva") => s_kva,
            (SourceImpedance::Transformer { z_pct, .. }, "z_pct") => z_pct,
            (SourceImpedance::Transformer { x_over_r, .. }, "x_over_r") => x_over_r,
            (SourceImpedance::ShortCircuitMva { s_sc_mva, .. }, "s_sc_mva") => s_sc_mva,
            (SourceImpedance::ShortCircuitMva { x_over_r, .. }, "x_over_r") => x_over_r,
            (SourceImpedance::ShortCircuitKa { i_sc_ka, .. }, "i_sc_ka") => i_sc_ka,
            (SourceImpedance::ShortCircuitKa { x_over_r, .. }, "x_over_r") => x_over_r,
            _ => return None,
        },
        ["source", "reactor", f] => match (&mut s.source.reactor, *f) {
            (LineReactor::Henry { l_h, .. }, "l_h") => l_h,
            (LineReactor::Henry { r_ohm, .. }, "r_ohm") => r_ohm,
            (LineReactor::Percent { z_pct, .. }, "z_pct") => z_pct,
            (LineReactor::Percent { x_over_r, .. }, "x_over_r") => x_over_r,
            _ => return None,
        },
        ["bridge", f] => {
            let b = &mut s.bridge;
            match *f {
                "alpha_deg" => &mut b.alpha_deg,
                "gate_width_deg" => &mut b.gate_width_deg,
                "v_threshold_v" => &mut b.v_threshold_v,
                "r_slope_ohm" => &mut b.r_slope_ohm,
                "interphase_l_h" => &mut b.interphase_l_h,
                _ => return None,
            }
        }
        ["dc", "load", f] => match (&mut s.dc.load, *f) {
            (DcLoad::Resistor { r_ohm }, "r_ohm") => r_ohm,
            (DcLoad::Rle { r_ohm, .. }, "r_ohm") => r_ohm,
            (DcLoad::Rle { l_h, .. }, "l_h") => l_h,
            (DcLoad::Rle { e_v, .. }, "e_v") => e_v,
            (DcLoad::ConstantCurrent { i_a }, "i_a") => i_a,
            (DcLoad::ConstantPower { p_w }, "p_w") => p_w,
            _ => return None,
        },
        ["dc", f] => {
            let c = &mut s.dc;
            match *f {
                "choke_l_h" => &mut c.choke_l_h,
                "choke_r_ohm" => &mut c.choke_r_ohm,
                "cap_f" => &mut c.cap_f,
                "cap_esr_ohm" => &mut c.cap_esr_ohm,
                "bleed_r_ohm" => &mut c.bleed_r_ohm,
                "precharge_r_ohm" => &mut c.precharge_r_ohm,
                "precharge_bypass_s" => &mut c.precharge_bypass_s,
                "precharge_bypass_pu" => &mut c.precharge_bypass_pu,
                "cap_rth_k_per_w" => &mut c.cap_rth_k_per_w,
                "cap_rated_life_h" => &mut c.cap_rated_life_h,
                "cap_rated_temp_c" => &mut c.cap_rated_temp_c,
                "ambient_c" => &mut c.ambient_c,
                _ => return None,
            }
        }
        ["analysis", "rated_power_w"] => &mut s.analysis.rated_power_w,
        ["analysis", "demand_current_a"] => &mut s.analysis.demand_current_a,
        ["compliance", "reactor_steps_pct", i] => s.compliance.reactor_steps_pct.get_mut(at(i)?)?,
        ["compliance", "choke_steps_pct", i] => s.compliance.choke_steps_pct.get_mut(at(i)?)?,
        _ => return None,
    })
}

/// The x values of a sweep.
pub fn xs(spec: &SweepSpec) -> Vec<f64> {
    if spec.points == 1 {
        return vec![spec.from];
    }
    (0..spec.points)
        .map(|i| spec.from + (spec.to - spec.from) * i as f64 / (spec.points - 1) as f64)
        .collect()
}

/// Run one sweep point on its own (a cold solve; see [`Sweeper`] for a run
/// of points).
pub fn point(s: &Scenario, path: &str, x: f64) -> SweepPoint {
    // One point: set through the serialised scenario (checking the direct
    // route would cost as much).
    Sweeper::new_unchecked(s, path, false).point(x)
}

/// A run of sweep points over one field of one scenario.  Each point's
/// simulation starts from the previous solved point (`sim::WarmStart`): no
/// warm-up periods and fewer Newton iterations, the same periodic solution.
/// A point leaves out what the summary does not show: the power-up
/// transient (`analysis.transient_cycles` is set to 0) and the compliance
/// fix search (`compliance.search_fixes` off), each of which costs whole
/// extra simulations; and of the analysis itself it computes only what
/// [`summarize`] reads (see `lean_analysis`): the same summary to the bit.
pub struct Sweeper {
    /// The scenario as serialised, so that a point only sets one number.
    base: serde_json::Value,
    /// The scenario itself when `path` names a field that is set directly
    /// (see `f64_field`), checked against the serialised route.
    direct: Option<Scenario>,
    path: String,
    /// The last two solved points (x, their warm starts), newest last.
    solved: Vec<(f64, crate::sim::WarmStart)>,
}

impl Sweeper {
    /// A sweeper of the numeric field at `path` of `s`; an error when the
    /// path does not name a numeric field.
    pub fn new(s: &Scenario, path: &str) -> Result<Sweeper, String> {
        // Any value will do to check the path (scenario parsing checks no ranges).
        with_value(s, path, 1.0)?;
        Ok(Sweeper::new_unchecked(s, path, true))
    }

    /// A sweeper (`try_direct`: set the field directly where that agrees).
    fn new_unchecked(s: &Scenario, path: &str, try_direct: bool) -> Sweeper {
        let mut base = s.clone();
        base.analysis.transient_cycles = 0;
        base.compliance.search_fixes = false;
        let value = serde_json::to_value(&base).unwrap_or_default();
        // The field is set directly only where that gives the scenario the
        // serialised route gives (two values tried: a path that names no
        // floating-point field, or another one, fails this).
        let agrees = |x: f64| {
            let mut t = base.clone();
            f64_field(&mut t, path).map(|f| *f = x).is_some()
                && with_value_in(value.clone(), path, x).as_ref() == Ok(&t)
        };
        let direct = (try_direct && agrees(0.123_456_789) && agrees(-98_765.432_1)).then_some(base);
        Sweeper {
            base: value,
            direct,
            path: path.to_string(),
            solved: Vec::new(),
        }
    }

    /// The scenario with the field set to `x`.
    fn scenario_at(&self, x: f64) -> Result<Scenario, String> {
        // A finite number is what the serialised route sets exactly (it
        // turns others into errors).
        if let (Some(base), true) = (&self.direct, x.is_finite()) {
            let mut s = base.clone();
            if let Some(f) = f64_field(&mut s, &self.path) {
                *f = x;
                return Ok(s);
            }
        }
        with_value_in(self.base.clone(), &self.path, x)
    }

    /// The point with the field set to `x`.  A failing point carries its
    /// error, and the next point starts from the last solved one.
    pub fn point(&mut self, x: f64) -> SweepPoint {
        // The start: the last solved point, extrapolated through the one
        // before when the new point lies on the same line.
        let warm = match self.solved.as_slice() {
            [(x0, w0), (x1, w1)] => Some(w1.extrapolate(w0, (x - x1) / (x1 - x0))),
            [(_, w1)] => Some(w1.clone()),
            _ => None,
        };
        let analysed = self
            .scenario_at(x)
            .and_then(|sc| lean_analysis(&sc, warm.as_ref()));
        match analysed {
            Ok(a) => {
                match a.warm_start {
                    Some(w) => {
                        if self.solved.len() == 2 {
                            self.solved.remove(0);
                        }
                        self.solved.push((x, w));
                    }
                    // A solved point that leaves no warm start: the next
                    // point starts cold (no prediction from older points).
                    None if a.solved => self.solved.clear(),
                    None => {}
                }
                let error = if a.summary.is_none() {
                    a.first_warning
                } else {
                    None
                };
                SweepPoint {
                    x,
                    summary: a.summary,
                    error,
                }
            }
            Err(e) => SweepPoint {
                x,
                summary: None,
                error: Some(e),
            },
        }
    }
}

/// Run a sweep (a failing point carries its error).
pub fn sweep(s: &Scenario, spec: &SweepSpec) -> Result<Vec<SweepPoint>, String> {
    // Check the path once before running.
    with_value(s, &spec.path, spec.from)?;
    let mut run = Sweeper::new_unchecked(s, &spec.path, true);
    Ok(xs(spec).into_iter().map(|x| run.point(x)).collect())
}

/// CSV of a sweep: the varied path, then the summary fields.
pub fn to_csv(spec: &SweepSpec, pts: &[SweepPoint]) -> String {
    let mut out = String::new();
    out.push_str(&spec.path);
    for f in SUMMARY_FIELDS {
        out.push(',');
        out.push_str(f);
    }
    out.push_str(",error\n");
    for p in pts {
        out.push_str(&format!("{}", p.x));
        match &p.summary {
            Some(s) => {
                for v in s.values() {
                    out.push_str(&format!(",{v}"));
                }
                out.push_str(",\n");
            }
            None => {
                for _ in SUMMARY_FIELDS {
                    out.push(',');
                }
                let e = p
                    .error
                    .clone()
                    .unwrap_or_default()
                    .replace(['"', '\n'], " ");
                out.push_str(&format!(",\"{e}\"\n"));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn vary_parses_and_rejects() {
        let s = parse_vary("dc.load.p_w=1000:5000:5").unwrap();
        assert_eq!(s.points, 5);
        assert_eq!(xs(&s), vec![1000.0, 2000.0, 3000.0, 4000.0, 5000.0]);
        assert!(parse_vary("dc.load.p_w=1:2").is_err());
        assert!(parse_vary("x=a:2:3").is_err());
    }

    /// Every dotted path to a number in `v`, with whether it is a float.
    fn number_paths(v: &serde_json::Value, at: String, out: &mut Vec<(String, bool)>) {
        let join = |k: &str| {
            if at.is_empty() {
                k.to_string()
            } else {
                format!("{at}.{k}")
            }
        };
        match v {
            serde_json::Value::Object(m) => {
                for (k, x) in m {
                    number_paths(x, join(k), out);
                }
            }
            serde_json::Value::Array(a) => {
                for (i, x) in a.iter().enumerate() {
                    number_paths(x, join(&i.to_string()), out);
                }
            }
            serde_json::Value::Number(n) => out.push((at, n.is_f64())),
            _ => {}
        }
    }

    /// A sweep sets every real-number field of a scenario directly, in
    /// every variant of the source, reactor and load, and it is what the
    /// serialised route gives (`Sweeper` checks two values when it is made;
    /// here a third); whole-number fields go through the serialised route.
    #[test]
    fn every_real_field_is_set_directly_as_through_json() {
        use crate::scenario::{DcLoad, LineReactor, SourceImpedance, VoltageHarmonic};
        let mut cases = Vec::new();
        let impedances = [
            SourceImpedance::Direct {
                r_ohm: 0.01,
                l_h: 1e-4,
            },
            SourceImpedance::Transformer {
                s_kva: 500.0,
                z_pct: 6.0,
                x_over_r: 8.0,
            },
            SourceImpedance::ShortCircuitMva {
                s_sc_mva: 20.0,
                x_over_r: 9.0,
            },
            SourceImpedance::ShortCircuitKa {
                i_sc_ka: 25.0,
                x_over_r: 9.0,
            },
        ];
        let reactors = [
            LineReactor::None,
            LineReactor::Henry {
                l_h: 1e-3,
                r_ohm: 0.01,
            },
            LineReactor::Percent {
                z_pct: 3.0,
                x_over_r: 30.0,
            },
        ];
        let loads = [
            DcLoad::Resistor { r_ohm: 10.0 },
            DcLoad::Rle {
                r_ohm: 2.0,
                l_h: 0.01,
                e_v: 200.0,
            },
            DcLoad::ConstantCurrent { i_a: 50.0 },
            DcLoad::ConstantPower { p_w: 30e3 },
        ];
        for (k, imp) in impedances.iter().enumerate() {
            let mut s = Scenario::default();
            s.source.impedance = imp.clone();
            s.source.reactor = reactors[k % 3].clone();
            s.dc.load = loads[k].clone();
            s.supply.harmonics.push(VoltageHarmonic {
                order: 5,
                magnitude_pct: 2.0,
                phase_deg: 10.0,
            });
            s.bridge.open_device = Some(2);
            cases.push(s);
        }
        let (mut direct, mut serialised) = (0, 0);
        for s in &cases {
            let mut paths = Vec::new();
            number_paths(&serde_json::to_value(s).unwrap(), String::new(), &mut paths);
            for (path, real) in paths {
                let run = Sweeper::new(s, &path).unwrap();
                assert_eq!(run.direct.is_some(), real, "{path}");
                if real {
                    direct += 1;
                    let mut t = run.direct.clone().unwrap();
                    *f64_field(&mut t, &path).unwrap() = 4.25e-3;
                    assert_eq!(Ok(t), with_value_in(run.base.clone(), &path, 4.25e-3));
                    assert_eq!(
                        run.scenario_at(4.25e-3),
                        with_value_in(run.base.clone(), &path, 4.25e-3)
                    );
                } else {
                    serialised += 1;
                }
            }
        }
        // Every real field of the scenario format met (compliance step
        // lists included), and the whole numbers (h_max, grid points, order...).
        assert!(direct >= 160 && serialised >= 28, "{direct} {serialised}");
        // Not a number where the serialised route says so, direct or not.
        let run = Sweeper::new(&cases[0], "supply.v_ll_rms_v").unwrap();
        assert!(run.direct.is_some());
        assert_eq!(
            run.scenario_at(f64::NAN),
            with_value_in(run.base.clone(), "supply.v_ll_rms_v", f64::NAN)
        );
        assert!(run.scenario_at(f64::INFINITY).is_err());
    }

    #[test]
    fn with_value_sets_nested_and_indexed_fields() {
        let s = Scenario::default();
        let t = with_value(&s, "supply.phase_magnitude_pu.1", 0.95).unwrap();
        assert_eq!(t.supply.phase_magnitude_pu[1], 0.95);
        let t = with_value(&s, "dc.load.p_w", 12e3).unwrap();
        assert_eq!(
            t.dc.load,
            crate::scenario::DcLoad::ConstantPower { p_w: 12e3 }
        );
        assert!(with_value(&s, "dc.nothing", 1.0)
            .unwrap_err()
            .contains("nothing"));
        assert!(with_value(&s, "name", 1.0).is_err());
    }
}
