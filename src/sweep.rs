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
    /// Lowest instantaneous bus voltage, V (the undervoltage margin).
    pub v_dc_min_v: f64,
    /// Largest device average current, A (a diode's or thyristor's
    /// average-current rating).
    pub device_i_avg_a: f64,
    /// 5th and 7th harmonic of the line current, worst phase, % of its
    /// fundamental.
    pub h5_max_pct: f64,
    pub h7_max_pct: f64,
    /// The bus capacitor's core temperature, °C, and life estimate, h
    /// (`results::capacitor_thermal`; life 0 above its rated temperature;
    /// both 0 without a bus capacitor).
    pub cap_core_temp_c: f64,
    pub cap_life_h: f64,
}

/// Field names of [`Summary`] in order (CSV header).
pub const SUMMARY_FIELDS: [&str; 25] = [
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
    "v_dc_min_v",
    "device_i_avg_a",
    "h5_max_pct",
    "h7_max_pct",
    "cap_core_temp_c",
    "cap_life_h",
];

impl Summary {
    pub fn values(&self) -> [f64; 25] {
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
            self.v_dc_min_v,
            self.device_i_avg_a,
            self.h5_max_pct,
            self.h7_max_pct,
            self.cap_core_temp_c,
            self.cap_life_h,
        ]
    }
}

/// The largest of a device figure over the bridge's devices (0 without any).
fn worst_device(r: &results::Results, f: impl Fn(&results::DeviceRating) -> f64) -> f64 {
    r.ratings.devices.iter().map(f).fold(0.0, f64::max)
}

/// A bus capacitor figure, 0 without a bus capacitor.
fn capacitor_figure(r: &results::Results, f: impl Fn(&results::CapacitorFigures) -> f64) -> f64 {
    r.ratings.capacitor.as_ref().map(f).unwrap_or(0.0)
}

/// The largest percentage of `order` over the line currents' rows.
fn worst_order_pct(r: &results::Results, order: u32) -> f64 {
    r.line_currents
        .iter()
        .filter_map(|c| c.rows.iter().find(|h| h.order == order))
        .map(|h| h.pct_of_fundamental)
        .fold(0.0, f64::max)
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
        device_i_peak_a: worst_device(r, |d| d.i_peak_a),
        device_i_rms_a: worst_device(r, |d| d.i_rms_a),
        device_v_peak_v: r.ratings.worst_device_voltage_v,
        cap_i_rms_a: capacitor_figure(r, |c| c.i_rms_a),
        textbook_v_dc_v: a.textbook.vd_v,
        v_dc_min_v: r.dc.v_min_v,
        device_i_avg_a: worst_device(r, |d| d.i_avg_a),
        h5_max_pct: worst_order_pct(r, 5),
        h7_max_pct: worst_order_pct(r, 7),
        cap_core_temp_c: capacitor_figure(r, |c| c.core_temp_c),
        cap_life_h: capacitor_figure(r, |c| c.life_estimate_h),
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
    let (mut h5, mut h7) = (0.0f64, 0.0f64);
    for &k in &r.line_i {
        let si = sig(k);
        let (i1, thd, tdd) = results::line_distortion(si, demand);
        lc = (lc.0.max(si.rms), lc.1.max(i1));
        thd_max = f64::max(thd_max, thd);
        tdd_max = f64::max(tdd_max, tdd);
        h5 = h5.max(results::order_pct(&si.harmonics, 5));
        h7 = h7.max(results::order_pct(&si.harmonics, 7));
    }
    let cap = r.i_cap.map(|c| results::capacitor_thermal(s, sig(c).rms));
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
        v_dc_min_v: v.min,
        device_i_avg_a: devices.iter().map(|d| d.i_avg_a).fold(0.0, f64::max),
        h5_max_pct: h5,
        h7_max_pct: h7,
        cap_core_temp_c: cap.map(|c| c.core).unwrap_or(0.0),
        cap_life_h: cap.map(|c| c.life).unwrap_or(0.0),
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
    /// A solved point's warnings: the input checks' and the simulation's
    /// (as `analyze_from` lists them; the results' own are not computed).
    warnings: Vec<String>,
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
                warnings: warnings.into_iter().chain(sim.warnings).collect(),
            },
            Err(e) => {
                // `analyze_from`'s warnings: the input checks', then this.
                warnings.push(format!("simulation: {e}"));
                Outcome {
                    summary: None,
                    first_warning: warnings.into_iter().next(),
                    solved: false,
                    warm_start: None,
                    warnings: Vec::new(),
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
    /// Steps in equal ratios (FROM and TO both above zero) instead of equal
    /// differences: a capacitance or an inductance across decades.
    #[serde(default)]
    pub log: bool,
}

/// One point of a sweep.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SweepPoint {
    pub x: f64,
    pub summary: Option<Summary>,
    /// Why this point has no summary.
    pub error: Option<String>,
    /// A computed point's warnings: the input checks' and the simulation's
    /// (for example the constant-power load's change of model, or an
    /// unstable periodic solution); the full analysis's result warnings are
    /// not computed for a sweep point.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub warnings: Vec<String>,
}

/// Parse `PATH=FROM:TO:N`.
pub fn parse_vary(text: &str) -> Result<SweepSpec, String> {
    let (path, range) = text
        .split_once('=')
        .ok_or("--vary: expected PATH=FROM:TO:N or PATH=FROM:TO:N:log")?;
    let parts: Vec<&str> = range.split(':').collect();
    let log = match parts.get(3).map(|s| s.trim()) {
        None => false,
        Some("log") if parts.len() == 4 => true,
        _ => return Err("--vary: expected PATH=FROM:TO:N or PATH=FROM:TO:N:log".into()),
    };
    if parts.len() < 3 {
        return Err("--vary: expected PATH=FROM:TO:N or PATH=FROM:TO:N:log".into());
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
    let (from, to) = (num(parts[0], "FROM")?, num(parts[1], "TO")?);
    if log && !(from > 0.0 && to > 0.0) {
        return Err(format!(
            "--vary: steps in equal ratios (log) need FROM and TO above zero: {from} and {to}"
        ));
    }
    Ok(SweepSpec {
        path: path.trim().to_string(),
        from,
        to,
        points,
        log,
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

/// The x values of a sweep.
pub fn xs(spec: &SweepSpec) -> Vec<f64> {
    if spec.points == 1 {
        return vec![spec.from];
    }
    let n = (spec.points - 1) as f64;
    if spec.log && spec.from > 0.0 && spec.to > 0.0 {
        // FROM (TO/FROM)^(i/(N-1)), the ends exact.
        let r = (spec.to / spec.from).ln();
        return (0..spec.points)
            .map(|i| match i {
                0 => spec.from,
                _ if i == spec.points - 1 => spec.to,
                _ => spec.from * (r * i as f64 / n).exp(),
            })
            .collect();
    }
    (0..spec.points)
        .map(|i| spec.from + (spec.to - spec.from) * i as f64 / n)
        .collect()
}

/// The scenario every point of a sweep of `path` starts from: `s` without
/// the power-up transient and the fix search (see [`Sweeper`]), and, for a
/// sweep of the load, with the rating pinned: a rating taken from the load
/// (0) becomes the base case's, so that a percent line reactor keeps its
/// henries and IL its amperes at every point (the equipment does not change
/// with its load).
pub fn base_scenario(s: &Scenario, path: &str) -> Scenario {
    let mut base = s.clone();
    if path.starts_with("dc.load.") && base.analysis.rated_power_w <= 0.0 {
        base.analysis.rated_power_w = crate::params::rated_power_w(s);
    }
    base.analysis.transient_cycles = 0;
    base.compliance.search_fixes = false;
    base
}

/// Run one sweep point on its own (a cold solve; see [`Sweeper`] for a run
/// of points).
pub fn point(s: &Scenario, path: &str, x: f64) -> SweepPoint {
    Sweeper::new_unchecked(s, path).point(x)
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
        Ok(Sweeper::new_unchecked(s, path))
    }

    fn new_unchecked(s: &Scenario, path: &str) -> Sweeper {
        Sweeper {
            base: serde_json::to_value(base_scenario(s, path)).unwrap_or_default(),
            path: path.to_string(),
            solved: Vec::new(),
        }
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
        let analysed = with_value_in(self.base.clone(), &self.path, x)
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
                    warnings: a.warnings,
                }
            }
            Err(e) => SweepPoint {
                x,
                summary: None,
                error: Some(e),
                warnings: Vec::new(),
            },
        }
    }
}

/// Run a sweep (a failing point carries its error).
pub fn sweep(s: &Scenario, spec: &SweepSpec) -> Result<Vec<SweepPoint>, String> {
    // Check the path once before running.
    with_value(s, &spec.path, spec.from)?;
    let mut run = Sweeper::new_unchecked(s, &spec.path);
    Ok(xs(spec).into_iter().map(|x| run.point(x)).collect())
}

/// CSV of a sweep: the varied path, then the summary fields, a failed
/// point's error and a computed point's warnings (joined by " | ").
pub fn to_csv(spec: &SweepSpec, pts: &[SweepPoint]) -> String {
    let mut out = String::new();
    out.push_str(&spec.path);
    for f in SUMMARY_FIELDS {
        out.push(',');
        out.push_str(f);
    }
    out.push_str(",error,warnings\n");
    for p in pts {
        out.push_str(&format!("{}", p.x));
        match &p.summary {
            Some(s) => {
                for v in s.values() {
                    out.push_str(&format!(",{v}"));
                }
                if p.warnings.is_empty() {
                    out.push_str(",,\n");
                } else {
                    let w = p.warnings.join(" | ").replace(['"', '\n'], " ");
                    out.push_str(&format!(",,\"{w}\"\n"));
                }
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
                out.push_str(&format!(",\"{e}\",\n"));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `FROM:TO:N:log`: equal ratios between neighbours, the ends exact;
    /// refused with a bound at or below zero; plain `FROM:TO:N` unchanged.
    #[test]
    fn log_steps_are_in_equal_ratios() {
        let spec = parse_vary("dc.cap_f=0.0001:0.1:4:log").unwrap();
        assert!(spec.log);
        let x = xs(&spec);
        assert_eq!(x.len(), 4);
        assert_eq!((x[0], x[3]), (0.0001, 0.1));
        for w in x.windows(2) {
            assert!((w[1] / w[0] - 10.0).abs() < 1e-12, "{x:?}");
        }
        assert!(parse_vary("dc.cap_f=0:0.1:4:log").is_err());
        assert!(parse_vary("dc.cap_f=0.001:0.1:4:lin").is_err());
        let lin = parse_vary("dc.cap_f=0:0.3:4").unwrap();
        assert!(!lin.log);
        assert!((xs(&lin)[1] - 0.1).abs() < 1e-15);
    }

    #[test]
    fn a_load_sweep_keeps_the_rating_the_base_load_gave() {
        // Rating 0 = from the load: the base case's 45 kW sizes the 3 %
        // reactor.  A load-sweep point at 20 kW must keep that reactor (the
        // equipment does not change with its load), i.e. equal the analysis
        // with the rating pinned to 45 kW, and differ from re-rating at 20 kW.
        use crate::scenario::DcLoad;
        let mut s = Scenario::default();
        s.analysis.rated_power_w = 0.0;
        let p = point(&s, "dc.load.p_w", 20e3).summary.unwrap();
        let mut pinned = s.clone();
        pinned.dc.load = DcLoad::ConstantPower { p_w: 20e3 };
        pinned.analysis.rated_power_w = 45e3;
        let q = summarize(&crate::analysis::analyze(&pinned).unwrap()).unwrap();
        assert!((p.v_dc_avg_v - q.v_dc_avg_v).abs() < 1e-6 * q.v_dc_avg_v);
        assert!((p.i_line_rms_a - q.i_line_rms_a).abs() < 1e-6 * q.i_line_rms_a);
        let mut rerated = pinned.clone();
        rerated.analysis.rated_power_w = 0.0;
        let r = summarize(&crate::analysis::analyze(&rerated).unwrap()).unwrap();
        assert!(
            (p.v_dc_avg_v - r.v_dc_avg_v).abs() > 1.0,
            "{} {}",
            p.v_dc_avg_v,
            r.v_dc_avg_v
        );
    }

    #[test]
    fn vary_parses_and_rejects() {
        let s = parse_vary("dc.load.p_w=1000:5000:5").unwrap();
        assert_eq!(s.points, 5);
        assert_eq!(xs(&s), vec![1000.0, 2000.0, 3000.0, 4000.0, 5000.0]);
        assert!(parse_vary("dc.load.p_w=1:2").is_err());
        assert!(parse_vary("x=a:2:3").is_err());
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
