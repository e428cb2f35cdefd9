//! Field check: what the DC bus of a drive's diode front end should read, and
//! what a wrong reading means.
//!
//! A technician gives the nameplate data and meter readings ([`FieldInput`]);
//! [`check`] returns a [`FieldReport`]: the expected bus at no load and at the
//! present load with its band, the readings each fault would give
//! ("signatures", each one an exact periodic steady state of the engine), the
//! signatures ranked by their distance from the readings, and the safety
//! cautions, which are always part of the output.
//!
//! Method, in short:
//!
//! * The supply is taken from the three measured line-to-line voltages (their
//!   mean; the largest reading when they are so unbalanced that a phase looks
//!   missing at the meter), or the nominal value with a band of plus or minus
//!   10 % when not measured.
//! * The drive's inverter is modelled as a DC current that is constant within a
//!   supply period, set so that the mean bus power equals the present load
//!   (from the drive's kW), or, when only currents are known, so that the
//!   signature reproduces the measured mean line current.  Within a period the
//!   motor current, hence the inverter's DC current at a fixed modulation, hardly
//!   changes at ripple frequencies (common practice).  The engine's
//!   constant-power load (a negative incremental resistance) is not used here:
//!   with a lightly damped front end under the heavy ripple of a fault it can
//!   sustain an oscillation and give a spurious steady state.
//! * Values not on the nameplate are estimated by stated rules of thumb (see
//!   [`FieldReport::assumptions`]); every one is listed in the output.
//!
//! The distance metric is described at [`Distance`].

use crate::scenario::{DcLoad, LineReactor, Scenario, SourceImpedance};
use crate::sim::SimResult;
use crate::textbook::FieldError;
use serde::{Deserialize, Serialize};
use std::f64::consts::{PI, SQRT_2};

/// Everything the technician enters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default, deny_unknown_fields)]
pub struct FieldInput {
    pub nameplate: Nameplate,
    pub readings: Readings,
    pub trips: Trips,
    pub meter: Meter,
}

/// Nameplate and known circuit data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Nameplate {
    /// Nominal supply voltage, line-to-line RMS, V.
    pub supply_v_ll_rms_v: f64,
    /// Nominal supply frequency, Hz.
    pub supply_f_hz: f64,
    /// Drive rating, kW (motor shaft power class).
    pub rating_kw: Option<f64>,
    /// Drive rated output current, A RMS (used when `rating_kw` is not given).
    pub rating_a: Option<f64>,
    /// Present load, kW, e.g. from the drive's own display (output power).
    pub load_kw: Option<f64>,
    /// Present line current, A RMS (one clamp reading), when the three line
    /// currents are not given in the readings.
    pub load_current_a: Option<f64>,
    /// Line reactor impedance, percent on the drive rating (none if absent).
    pub line_reactor_z_pct: Option<f64>,
    /// DC choke inductance, mH (none if absent).
    pub dc_choke_l_mh: Option<f64>,
    /// Bus capacitance, µF (estimated from the rating if absent).
    pub bus_c_uf: Option<f64>,
    /// A precharge (soft-charge) resistor is fitted.
    pub precharge_fitted: bool,
    /// Precharge resistor, ohm (estimated if fitted and absent).
    pub precharge_r_ohm: Option<f64>,
    /// Supply (source) impedance, percent on the drive rating, if known.
    pub source_z_pct: Option<f64>,
}

impl Default for Nameplate {
    fn default() -> Self {
        Nameplate {
            supply_v_ll_rms_v: 400.0,
            supply_f_hz: 50.0,
            rating_kw: None,
            rating_a: None,
            load_kw: None,
            load_current_a: None,
            line_reactor_z_pct: None,
            dc_choke_l_mh: None,
            bus_c_uf: None,
            precharge_fitted: false,
            precharge_r_ohm: None,
            source_z_pct: None,
        }
    }
}

/// Meter readings at the drive, all optional.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default, deny_unknown_fields)]
pub struct Readings {
    /// The three line-to-line voltages (L1-L2, L2-L3, L3-L1), V RMS, at the
    /// drive's input terminals or upstream (the supply board): the
    /// signatures take this point as the supply, and every impedance
    /// downstream of it as part of the drive's feed.
    pub v_ll_rms_v: Option<[f64; 3]>,
    /// DC bus, meter on DC, V.
    pub dc_bus_mean_v: Option<f64>,
    /// DC bus, true-RMS meter on its AC range, V (the ripple RMS: the AC range
    /// blocks the DC part, common practice).
    pub dc_bus_ac_rms_v: Option<f64>,
    /// Frequency the meter shows on the bus AC range, Hz.
    pub ripple_hz: Option<f64>,
    /// The three line currents (L1, L2, L3), A RMS.
    pub line_i_rms_a: Option<[f64; 3]>,
}

/// The drive's bus trip levels, if known (from its manual or parameters).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default, deny_unknown_fields)]
pub struct Trips {
    /// Undervoltage trip, V DC.
    pub undervoltage_v: Option<f64>,
    /// Overvoltage trip, V DC.
    pub overvoltage_v: Option<f64>,
}

/// A meter accuracy specification: plus or minus (`pct` % of reading +
/// `digits` counts of `resolution`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tolerance {
    pub pct: f64,
    pub digits: f64,
    /// Value of one count on the range used (same unit as the reading).
    pub resolution: f64,
}

impl Tolerance {
    /// The tolerance in the reading's unit.
    pub fn of(&self, reading: f64) -> f64 {
        self.pct / 100.0 * reading.abs() + self.digits * self.resolution
    }
}

/// Meter accuracy.  Defaults are typical of a handheld 6000-count true-RMS
/// multimeter and clamp meter (from memory, not from a datasheet; enter the
/// figures of your own meter).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Meter {
    /// DC volts: ±(0.5 % + 2 counts of 0.1 V).
    pub dc_v: Tolerance,
    /// AC volts, 45 Hz to 1 kHz: ±(1.0 % + 3 counts of 0.1 V).
    pub ac_v: Tolerance,
    /// AC current, clamp: ±(2.0 % + 5 counts of 0.1 A).
    pub current: Tolerance,
}

impl Default for Meter {
    fn default() -> Self {
        Meter {
            dc_v: Tolerance {
                pct: 0.5,
                digits: 2.0,
                resolution: 0.1,
            },
            ac_v: Tolerance {
                pct: 1.0,
                digits: 3.0,
                resolution: 0.1,
            },
            current: Tolerance {
                pct: 2.0,
                digits: 5.0,
                resolution: 0.1,
            },
        }
    }
}

/// Parse a field input from JSON text, naming the path of a bad field.
pub fn from_json(text: &str) -> Result<FieldInput, FieldError> {
    let value: serde_json::Value = serde_json::from_str(text).map_err(|e| FieldError {
        field: "input".into(),
        reason: format!("not valid JSON: {e}"),
    })?;
    if !value.is_object() {
        return Err(err("input", "must be a JSON object"));
    }
    serde_path_to_error::deserialize(value).map_err(|e| {
        let path = e.path().to_string();
        FieldError {
            field: if path == "." { "input".into() } else { path },
            reason: e.inner().to_string(),
        }
    })
}

// ---------------------------------------------------------------- output

/// The complete field check.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct FieldReport {
    pub version: String,
    /// Safety cautions: always present, shown before anything else.
    pub safety: Vec<String>,
    pub expected: Expected,
    pub measured: Measured,
    /// Every signature, in the order of [`SignatureId`].
    pub signatures: Vec<Signature>,
    pub verdict: Verdict,
    /// The bank's capacitance as the ripple reading puts it, when the best
    /// fit is the healthy front end or a capacitance signature.
    #[serde(default)]
    pub bank_estimate: Option<BankEstimate>,
    /// Every value that was estimated or assumed, with its basis.
    pub assumptions: Vec<String>,
    pub warnings: Vec<String>,
}

/// The bank's capacitance from the ripple reading: interpolated, in
/// logarithms, between the simulated ripples of the bank at 100 %, 50 % and
/// 20 % (the healthy and the two capacitance signatures, each an exact
/// steady state at the present load), so it carries their ESR ageing too.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct BankEstimate {
    /// Percent of the bank as given (or as estimated, when not given).
    pub pct_of_bank: f64,
    /// The reading lies outside the simulated 20 to 100 % span (extrapolated).
    pub extrapolated: bool,
    pub note: String,
}

/// Interpolate `ln C` linearly in `ln ripple` through `pts` (fraction of
/// the bank, ripple RMS), sorted by falling fraction with rising ripple;
/// the end segments extend beyond the span.
fn bank_fraction(pts: &[(f64, f64)], ripple: f64) -> Option<(f64, bool)> {
    if pts.len() < 2
        || ripple <= 0.0
        || pts
            .windows(2)
            .any(|w| !(w[1].1 > w[0].1 && w[1].0 < w[0].0) || w[0].1 <= 0.0)
    {
        return None;
    }
    let k = (0..pts.len() - 1)
        .find(|&k| ripple <= pts[k + 1].1)
        .unwrap_or(pts.len() - 2);
    let (a, b) = (pts[k], pts[k + 1]);
    let t = (ripple.ln() - a.1.ln()) / (b.1.ln() - a.1.ln());
    let frac = (a.0.ln() + t * (b.0.ln() - a.0.ln())).exp();
    let extrapolated = ripple < pts[0].1 || ripple > pts[pts.len() - 1].1;
    Some((frac, extrapolated))
}

/// The bank from the ripple reading `va` (see [`BankEstimate`]), from the
/// ripples the healthy and the two capacitance signatures predict.
fn bank_estimate(signatures: &[Signature], va: f64, cap_estimated: bool) -> Option<BankEstimate> {
    let ripple_of = |id: SignatureId| {
        signatures
            .iter()
            .find(|x| x.id == id)
            .and_then(|x| x.predicted.as_ref())
            .map(|pr| pr.ripple_rms_v)
    };
    let pts: Vec<(f64, f64)> = [
        (1.0, SignatureId::Healthy),
        (0.5, SignatureId::Cap50),
        (0.2, SignatureId::Cap20),
    ]
    .iter()
    .map(|&(f, id)| ripple_of(id).map(|r| (f, r)))
    .collect::<Option<_>>()?;
    let (frac, extrapolated) = bank_fraction(&pts, va)?;
    let pct = 100.0 * frac;
    Some(BankEstimate {
        pct_of_bank: pct,
        extrapolated,
        note: format!(
            "The {va:.1} V ripple reading puts the bank at about {pct:.0} % of the {} capacitance ({}interpolated between exact simulations of the bank at 100, 50 and 20 %, with their ESR; a ripple reading is good to about {}).",
            if cap_estimated { "estimated" } else { "given" },
            if extrapolated { "extrapolated beyond the simulated span; " } else { "" },
            if cap_estimated { "a factor of two, since the capacitance itself was estimated" } else { "25 %, the ripple model's own uncertainty with a known capacitance (an estimate, see the distance)" }
        ),
    })
}

/// What the bus should read.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Expected {
    /// Supply used for the signatures, line-to-line RMS, V.
    pub supply_v_ll_rms_v: f64,
    /// Where it comes from (measured mean, largest reading or nominal).
    pub supply_basis: String,
    /// Relative uncertainty of the supply level (meter tolerance, or 0.10 for nominal).
    pub supply_rel_uncertainty: f64,
    /// Bus at no load: `sqrt2 V_LL,max - 2 V_diode`, V.
    pub no_load_v: f64,
    /// What a meter on DC may read at no load, low and high, V.
    pub no_load_band_v: [f64; 2],
    /// Bus at the present load (healthy simulation), V.
    pub at_load_v: f64,
    /// What a meter on DC may read at the present load, low and high, V.
    pub at_load_band_v: [f64; 2],
    /// Bus ripple RMS at the present load (healthy), what the AC range reads, V.
    pub at_load_ripple_rms_v: f64,
    /// Load used, W (mean bus power of the healthy signature).
    pub load_p_w: f64,
    /// How the load was set and which load model was used.
    pub load_basis: String,
    pub undervoltage: Option<TripMargin>,
    pub overvoltage: Option<TripMargin>,
}

/// Distance of a trip level from the expected bus.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct TripMargin {
    pub trip_v: f64,
    /// Expected bus minus the undervoltage trip (at load), or the
    /// overvoltage trip minus the expected bus (at no load), V.
    pub margin_v: f64,
    /// The same in percent of the expected bus.
    pub margin_pct: f64,
    /// The margin at the unfavourable edge of the band, V.
    pub margin_worst_v: f64,
    pub note: String,
}

/// Quantities derived from the readings.
#[derive(Debug, Clone, Serialize, Deserialize, Default)]
pub struct Measured {
    /// Mean of the three line-to-line readings, V.
    pub v_ll_mean_v: Option<f64>,
    /// Line voltage unbalance, percent: the largest deviation from the mean
    /// divided by the mean (the NEMA MG 1 definition, from memory).
    pub voltage_unbalance_pct: Option<f64>,
    /// Mean of the three line currents, A.
    pub line_i_mean_a: Option<f64>,
    /// Line current imbalance, percent: the largest deviation from the mean
    /// RMS divided by the mean RMS.
    pub current_imbalance_pct: Option<f64>,
    /// Phase (1, 2, 3) with the lowest current, when currents are given.
    pub lowest_current_phase: Option<usize>,
}

/// Which fault a signature simulates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SignatureId {
    Healthy,
    LostPhase,
    OpenDiode,
    OpenPair,
    Cap50,
    Cap20,
    Unbalance2,
    Unbalance5,
    HighSourceZ,
    PrechargeNotBypassed,
}

impl SignatureId {
    pub const ALL: [SignatureId; 10] = [
        SignatureId::Healthy,
        SignatureId::LostPhase,
        SignatureId::OpenDiode,
        SignatureId::OpenPair,
        SignatureId::Cap50,
        SignatureId::Cap20,
        SignatureId::Unbalance2,
        SignatureId::Unbalance5,
        SignatureId::HighSourceZ,
        SignatureId::PrechargeNotBypassed,
    ];

    /// Plain title.
    pub fn title(self) -> &'static str {
        match self {
            SignatureId::Healthy => "healthy front end",
            SignatureId::LostPhase => "lost phase ahead of the meter (fuse, contact, cable)",
            SignatureId::OpenDiode => "one open diode",
            SignatureId::OpenPair => {
                "open pair in one phase (both diodes of one leg, or an open internal fuse)"
            }
            SignatureId::Cap50 => "bus capacitance down to 50 %",
            SignatureId::Cap20 => "bus capacitance down to 20 %",
            SignatureId::Unbalance2 => "supply unbalance 2 %",
            SignatureId::Unbalance5 => "supply unbalance 5 %",
            SignatureId::HighSourceZ => "high impedance between the meter point and the bridge (loose joint, undersized or long feed)",
            SignatureId::PrechargeNotBypassed => "precharge resistor not bypassed",
        }
    }

    /// What it means and what to check next.
    pub fn advice(self) -> &'static str {
        match self {
            SignatureId::Healthy => "The front end behaves as a healthy bridge and bank would. If the drive still misbehaves, look past the rectifier (inverter, motor, parameters).",
            SignatureId::LostPhase => "One phase carries no current and the voltages at the terminals show it. Check the upstream fuses, the contactor or breaker poles and the terminations of that phase (with the supply isolated).",
            SignatureId::OpenDiode => "One of the six diodes does not conduct: the ripple repeats once per supply period. With the drive isolated and the bus proven discharged, test the rectifier diodes with the meter's diode range.",
            SignatureId::OpenPair => "One phase carries no current although its terminal voltage is normal: the break is between the terminals and the bridge (an internal fuse, a connection or both diodes of that leg). Isolate, prove the bus discharged, then test that leg and its fuse.",
            SignatureId::Cap50 => "The bus ripple is that of a bank at about half its capacitance (ageing electrolytics lose capacitance and gain ESR). When the capacitance was estimated, the bank may simply be smaller than the estimate: check the maker's data. Look for bulging or leaking capacitors; measure them out of circuit after discharge.",
            SignatureId::Cap20 => "The bus ripple is that of a bank with most of its capacitance gone. Plan the capacitor replacement; look for bulging, leaking or hot capacitors and for an open capacitor connection.",
            SignatureId::Unbalance2 => "The supply is somewhat unbalanced: a diode front end amplifies a small voltage unbalance into a large current imbalance. Measure the voltages at the supply board and look for single-phase loads or a poor joint.",
            SignatureId::Unbalance5 => "The supply is strongly unbalanced. Measure at the supply board, upstream, and check joints and tap settings; report it to whoever runs the supply.",
            SignatureId::HighSourceZ => "The bus sags more under load than the measured supply should allow: a loose or corroded joint, or an undersized or very long cable, between the meter point and the bridge. With the supply isolated, check the tightness of the terminations; under load, compare the voltage at the supply board with the drive's terminals (a weak feed upstream of the meter shows as a terminal voltage that sags under load, and the bus then agrees with it).",
            SignatureId::PrechargeNotBypassed => "The bus sags by the load current times the precharge resistor: the bypass (contactor or thyristor) does not close, and the resistor, rated only for the short charging pulse, is carrying the load current. Stop the drive now; the resistor can overheat or burn and stays hot after stopping. Then, isolated and with the bus proven discharged, check the bypass and its control.",
        }
    }
}

/// The readings one fault would give.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Signature {
    pub id: SignatureId,
    pub title: String,
    /// How the fault was put into the circuit.
    pub model: String,
    /// Load power the signature was run at, W.
    pub load_p_w: f64,
    /// None when the circuit cannot carry the load (reason in `failed`).
    pub predicted: Option<Predicted>,
    pub failed: Option<String>,
    /// Distance from the readings (None when there are no readings to compare
    /// or the simulation failed).
    pub distance: Option<Distance>,
    pub advice: String,
}

/// Predicted readings of one signature.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Predicted {
    pub dc_mean_v: f64,
    /// What a true-RMS meter on AC reads on the bus, V.
    pub ripple_rms_v: f64,
    /// Frequency of the largest ripple component, Hz.
    pub ripple_dominant_hz: f64,
    /// Frequencies of the ripple components within 3 dB of the largest
    /// (amplitude at least 1/sqrt2 of it), the largest first, Hz: a meter's
    /// frequency counter on such a ripple may lock on any of them.
    #[serde(default)]
    pub ripple_near_dominant_hz: Vec<f64>,
    /// Lowest and highest bus voltage over a period, V.
    pub dc_min_v: f64,
    pub dc_max_v: f64,
    /// Line currents, A RMS.
    pub line_i_rms_a: [f64; 3],
    /// Largest deviation from the mean RMS line current, percent of the mean.
    pub current_imbalance_pct: f64,
    /// Line-to-line voltages at the drive terminals, V RMS.
    pub terminal_v_ll_rms_v: [f64; 3],
    pub voltage_unbalance_pct: f64,
    /// 64 samples of the bus ripple (bus minus its mean) over one supply period, V.
    pub ripple_wave_v: Vec<f64>,
}

/// Distance between a signature's predicted readings and the measured ones.
///
/// For every reading that was entered, a normalised residual `z` is formed
/// (residual divided by its uncertainty `sigma`), and the distance is the
/// root mean square of the residuals, `D = sqrt(sum z^2 / n)`.  `D <= 1`
/// means the signature explains the readings within the expected uncertainty
/// on average.  Each `|z|` is capped at [`Z_CAP`] so that one suspect reading
/// (a meter's frequency counter locking on the wrong component, say) cannot
/// swamp the rest.  The residuals:
///
/// * DC mean: `(m - p) / sigma`, `sigma = tol_dc(m) + p u_supply + p 0.01`
///   (the linear sum, the same as the band the report shows, so that a
///   reading inside that band is within tolerance), where `tol_dc` is the
///   meter's DC tolerance, `u_supply` the relative uncertainty of the supply
///   level and 1 % the model's own (load, source impedance, diode drops; an
///   estimate).
/// * Ripple (AC range): `ln((m + a) / (p + a)) / sigma`, `a` = the meter's
///   count floor, `sigma^2 = (ac %)^2 + s_model^2`, `s_model` = 0.25 with a
///   known capacitance and 0.5 with an estimated one (the rule of thumb is good
///   to about a factor of two).  The logarithm because ripple spans orders of
///   magnitude between faults.
/// * Ripple frequency: `ln(m / p) / 0.1` (a meter's counter on a distorted
///   ripple is rough; 6f, 2f and f are a factor 2 to 6 apart), `p` the
///   frequency of the ripple component within 3 dB of the largest that is
///   nearest the reading (a counter may lock on any of them).
/// * Current imbalance: `(m - p) / sigma`, in percentage points,
///   `sigma^2 = tol_clamp^2 + (3 + 0.2 p)^2` (the amplification of an
///   unbalance depends on the source impedance, which is rarely known).
/// * Voltage unbalance: `(m - p) / sigma`, percentage points,
///   `sigma^2 = tol_ac^2 + 0.3^2`; for a lost phase, whose open terminal floats
///   at a voltage set by the drive's input filter and the meter, 15 points.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Distance {
    pub value: f64,
    pub terms: Vec<Term>,
}

/// One residual of the distance.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Term {
    pub reading: String,
    pub measured: f64,
    pub predicted: f64,
    pub sigma: f64,
    pub z: f64,
}

/// Cap on one normalised residual.
pub const Z_CAP: f64 = 10.0;

/// Ranking and plain-language conclusion.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Verdict {
    /// Signatures from the best fit to the worst (failed ones last).
    pub ranking: Vec<Ranked>,
    /// True when the healthy signature fits within tolerance (distance <= 1).
    pub healthy_fits: bool,
    /// Plain-language conclusion (never a certainty).
    pub summary: String,
    /// What to check next.
    pub next: Vec<String>,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Ranked {
    pub id: SignatureId,
    pub title: String,
    pub distance: Option<f64>,
}

/// The safety cautions carried by every field report.
pub fn safety_text() -> Vec<String> {
    [
        "DC bus capacitors can hold a lethal charge long after the supply is off. Wait at least the discharge time on the drive's label before opening covers or touching any terminal.",
        "Prove the bus below a safe level before touching: measure DC+ to DC-, and each to earth, with a meter rated for the voltage and measurement category, tested on a known source before and after.",
        "Lock out and tag out the supply and every other source (second feed, bypass, a motor that can turn and regenerate, a shared DC bus).",
        "Readings on a live drive are live work: qualified persons only, with the permit, protective equipment and meter category your site requires.",
        "Local electrical codes, site rules and the drive maker's manual govern. This check is a guide to what readings mean; it is not a substitute for them and cannot prove a drive safe or faulty.",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect()
}

// ---------------------------------------------------------------- rules

/// Device threshold voltage per diode, V: typical of silicon rectifier
/// modules (from memory).
pub const V_DIODE_V: f64 = 1.0;
/// Energy stored per kW of rating at the bus, J/kW, for the capacitance
/// estimate.  Rule of thumb (from memory): small 400 V drives carry about
/// 50 µF per kW, about 8 J/kW at 565 V; scaled as `C = 2 E / V_bus^2` for
/// other supply voltages.  Makes differ several-fold ("slim DC link" drives
/// with film capacitors carry far less).
pub const BUS_ENERGY_J_PER_KW: f64 = 8.0;
/// Dissipation factor of aluminium electrolytics at 100 Hz for the ESR
/// estimate `ESR = tan_delta / (2 pi 100 Hz C)` (typical, from memory).
pub const TAN_DELTA: f64 = 0.08;
/// Supply impedance on the drive rating when not given, percent: a drive fed
/// from a board on a transformer many times its rating (assumption).
pub const SOURCE_Z_PCT: f64 = 0.5;
/// X/R of the supply impedance (assumption).
pub const SOURCE_X_OVER_R: f64 = 2.0;
/// X/R of a line reactor (typical of iron-core reactors, from memory).
pub const REACTOR_X_OVER_R: f64 = 20.0;
/// Precharge time constant `R C` when the resistor value is unknown, s
/// (rule of thumb, from memory: tens of milliseconds in small drives).
pub const PRECHARGE_TAU_S: f64 = 0.05;
/// Output power per (sqrt3 V I) of a drive rated in amperes (motor power
/// factor and efficiency, rule of thumb from memory).
pub const KW_PER_KVA: f64 = 0.85;
/// The high-impedance signature: total line impedance this many times the
/// nominal (source plus reactor); the added part has X/R = 1 (a loose joint or a
/// long thin cable is largely resistive; assumption).
pub const HIGH_Z_FACTOR: f64 = 5.0;
/// Voltage unbalance above which the readings look like a missing phase at
/// the meter, percent (then the largest reading is taken as the supply).
pub const MISSING_PHASE_UNBALANCE_PCT: f64 = 10.0;

use crate::params::{err, nonneg, pos};

fn tol_ok(t: &Tolerance, field: &str) -> Result<(), FieldError> {
    nonneg(t.pct, &format!("{field}.pct"))?;
    nonneg(t.digits, &format!("{field}.digits"))?;
    nonneg(t.resolution, &format!("{field}.resolution"))?;
    if t.pct > 20.0 {
        return Err(err(&format!("{field}.pct"), "must be at most 20 %"));
    }
    Ok(())
}

/// Largest deviation from the mean over the mean, percent.
pub fn imbalance_pct(x: &[f64; 3]) -> f64 {
    let m = (x[0] + x[1] + x[2]) / 3.0;
    if m <= 0.0 {
        return 0.0;
    }
    x.iter().map(|v| (v - m).abs()).fold(0.0, f64::max) / m * 100.0
}

/// Checked input and the plan derived from it.
struct Plan {
    v_ll_v: f64,
    f_hz: f64,
    u_supply: f64,
    v_ll_max_v: f64,
    rated_p_w: f64,
    cap_f: f64,
    cap_estimated: bool,
    precharge_r_ohm: Option<f64>,
    target: Target,
    open_phase: usize,
}

#[derive(Clone, Copy)]
enum Target {
    Power(f64),
    LineCurrent(f64),
}

fn plan(inp: &FieldInput, assumptions: &mut Vec<String>) -> Result<Plan, FieldError> {
    let n = &inp.nameplate;
    let r = &inp.readings;
    let v_nom = pos(n.supply_v_ll_rms_v, "nameplate.supply_v_ll_rms_v")?;
    let f_hz = pos(n.supply_f_hz, "nameplate.supply_f_hz")?;
    if !(10.0..=1000.0).contains(&f_hz) {
        return Err(err(
            "nameplate.supply_f_hz",
            "must be between 10 Hz and 1 kHz",
        ));
    }
    tol_ok(&inp.meter.dc_v, "meter.dc_v")?;
    tol_ok(&inp.meter.ac_v, "meter.ac_v")?;
    tol_ok(&inp.meter.current, "meter.current")?;
    let opt_pos = |x: Option<f64>, f: &str| -> Result<Option<f64>, FieldError> {
        x.map(|v| pos(v, f)).transpose()
    };
    let rating_kw = opt_pos(n.rating_kw, "nameplate.rating_kw")?;
    let rating_a = opt_pos(n.rating_a, "nameplate.rating_a")?;
    let load_kw = opt_pos(n.load_kw, "nameplate.load_kw")?;
    let load_i = opt_pos(n.load_current_a, "nameplate.load_current_a")?;
    let reactor = n
        .line_reactor_z_pct
        .map(|v| nonneg(v, "nameplate.line_reactor_z_pct"))
        .transpose()?;
    n.dc_choke_l_mh
        .map(|v| nonneg(v, "nameplate.dc_choke_l_mh"))
        .transpose()?;
    let c_uf = opt_pos(n.bus_c_uf, "nameplate.bus_c_uf")?;
    let pre_r = opt_pos(n.precharge_r_ohm, "nameplate.precharge_r_ohm")?;
    let src_z = opt_pos(n.source_z_pct, "nameplate.source_z_pct")?;
    if let Some(z) = reactor {
        if z > 20.0 {
            return Err(err("nameplate.line_reactor_z_pct", "must be at most 20 %"));
        }
    }
    if let Some(z) = src_z {
        if z > 30.0 {
            return Err(err("nameplate.source_z_pct", "must be at most 30 %"));
        }
    }
    if let Some(v) = r.v_ll_rms_v {
        for k in 0..3 {
            pos(v[k], &format!("readings.v_ll_rms_v[{k}]"))?;
            if v[k] > 3.0 * v_nom || v[k] < 0.2 * v_nom {
                return Err(err(
                    &format!("readings.v_ll_rms_v[{k}]"),
                    "is far from the nominal supply voltage (check the reading and the nameplate)",
                ));
            }
        }
    }
    if let Some(i) = r.line_i_rms_a {
        for k in 0..3 {
            nonneg(i[k], &format!("readings.line_i_rms_a[{k}]"))?;
        }
        if i.iter().sum::<f64>() <= 0.0 {
            return Err(err(
                "readings.line_i_rms_a",
                "at least one current must be above zero",
            ));
        }
    }
    opt_pos(r.dc_bus_mean_v, "readings.dc_bus_mean_v")?;
    r.dc_bus_ac_rms_v
        .map(|v| nonneg(v, "readings.dc_bus_ac_rms_v"))
        .transpose()?;
    opt_pos(r.ripple_hz, "readings.ripple_hz")?;
    let uv = opt_pos(inp.trips.undervoltage_v, "trips.undervoltage_v")?;
    let ov = opt_pos(inp.trips.overvoltage_v, "trips.overvoltage_v")?;
    if let (Some(u), Some(o)) = (uv, ov) {
        if u >= o {
            return Err(err(
                "trips.overvoltage_v",
                "must be above the undervoltage trip",
            ));
        }
    }

    // Supply level.
    let ac = inp.meter.ac_v;
    let (v_ll_v, u_supply, v_ll_max_v) = match r.v_ll_rms_v {
        Some(v) => {
            let mean = (v[0] + v[1] + v[2]) / 3.0;
            let max = v[0].max(v[1]).max(v[2]);
            if imbalance_pct(&v) > MISSING_PHASE_UNBALANCE_PCT {
                assumptions.push(format!(
                    "supply: the line voltages are unbalanced by more than {MISSING_PHASE_UNBALANCE_PCT} %, as with a phase missing at the meter; the largest reading, {max:.1} V, is taken as the supply"
                ));
                (max, ac.of(max) / max, max)
            } else {
                assumptions.push(format!(
                    "supply: the mean of the three line voltage readings, {mean:.1} V, balanced, at {f_hz} Hz nominal; uncertainty the AC meter tolerance"
                ));
                (mean, ac.of(mean) / mean, max)
            }
        }
        None => {
            assumptions.push(format!(
                "supply: not measured; nominal {v_nom} V with a band of plus or minus 10 % (common practice for the steady-state supply tolerance)"
            ));
            (v_nom, 0.10, v_nom)
        }
    };

    // Load target.
    let meas_i_mean = r.line_i_rms_a.map(|i| (i[0] + i[1] + i[2]) / 3.0);
    let target = if let Some(p) = load_kw {
        Target::Power(p * 1e3)
    } else if let Some(i) = meas_i_mean.or(load_i) {
        Target::LineCurrent(i)
    } else if let Some(p) = rating_kw {
        assumptions.push("load: no present load given; the drive is assumed at its full rating (give load_kw or the line currents for a better check)".into());
        Target::Power(p * 1e3)
    } else if let Some(i) = rating_a {
        // The rated current is the drive's output (motor) current, not its
        // line current: the load is the rating derived from it below.
        assumptions.push("load: no present load given; the drive is assumed at its rating as derived from its rated (output) current (give load_kw or the line currents for a better check)".into());
        Target::Power(3f64.sqrt() * v_nom * i * KW_PER_KVA)
    } else {
        return Err(err(
            "nameplate.rating_kw",
            "give the drive rating (rating_kw or rating_a) or the present load (load_kw, load_current_a or the line currents)",
        ));
    };

    // Rating, for the percent impedances and the capacitance estimate.
    let rated_p_w = if let Some(p) = rating_kw {
        p * 1e3
    } else if let Some(i) = rating_a {
        let p = 3f64.sqrt() * v_nom * i * KW_PER_KVA;
        assumptions.push(format!(
            "rating: {:.1} kW from the rated current, sqrt3 x V x I x {KW_PER_KVA} (rule of thumb for motor power factor and efficiency, from memory)",
            p / 1e3
        ));
        p
    } else {
        let p = match target {
            Target::Power(p) => p,
            Target::LineCurrent(i) => 3f64.sqrt() * v_ll_v * i * 0.93,
        };
        assumptions.push(format!(
            "rating: not given; the present load, about {:.1} kW, is used as the rating",
            p / 1e3
        ));
        p
    };

    let v_bus_nom = SQRT_2 * v_nom;
    let (cap_f, cap_estimated) = match c_uf {
        Some(c) => (c * 1e-6, false),
        None => {
            let c = 2.0 * BUS_ENERGY_J_PER_KW * rated_p_w / 1e3 / (v_bus_nom * v_bus_nom);
            assumptions.push(format!(
                "bus capacitance: not given; estimated {:.0} µF from {BUS_ENERGY_J_PER_KW} J per kW of rating at the bus (rule of thumb from memory: about 50 µF per kW for small 400 V drives; makes differ several-fold, so the ripple comparison is given a wide uncertainty)",
                c * 1e6
            ));
            (c, true)
        }
    };
    assumptions.push(format!(
        "capacitor ESR: dissipation factor {TAN_DELTA} at 100 Hz, ESR = tan d / (2 pi 100 Hz C) (typical aluminium electrolytic, from memory); a capacitance loss keeps tan d, so the ESR rises as C falls"
    ));
    match src_z {
        Some(z) => assumptions.push(format!(
            "supply impedance: {z} % on the drive rating (given), X/R {SOURCE_X_OVER_R} (assumption)"
        )),
        None => assumptions.push(format!(
            "supply impedance: not given; {SOURCE_Z_PCT} % on the drive rating with X/R {SOURCE_X_OVER_R} (assumption: a board fed by a transformer many times the drive's rating)"
        )),
    }
    if let Some(z) = reactor {
        assumptions.push(format!(
            "line reactor: {z} % on the drive rating, X/R {REACTOR_X_OVER_R} (typical iron-core reactor, from memory)"
        ));
    }
    assumptions.push(format!(
        "bridge: six-pulse diode bridge, {V_DIODE_V} V threshold per diode (typical silicon rectifier, from memory)"
    ));
    let precharge_r_ohm = if n.precharge_fitted || pre_r.is_some() {
        Some(match pre_r {
            Some(r) => r,
            None => {
                let r = PRECHARGE_TAU_S / cap_f;
                assumptions.push(format!(
                    "precharge resistor: value not given; {r:.1} ohm from R C = {PRECHARGE_TAU_S} s (rule of thumb from memory)"
                ));
                r
            }
        })
    } else {
        None
    };
    let open_phase = r
        .line_i_rms_a
        .map(|i| (0..3).min_by(|&a, &b| i[a].total_cmp(&i[b])).unwrap_or(0))
        .unwrap_or(0);
    Ok(Plan {
        v_ll_v,
        f_hz,
        u_supply,
        v_ll_max_v,
        rated_p_w,
        cap_f,
        cap_estimated,
        precharge_r_ohm,
        target,
        open_phase,
    })
}

/// The healthy circuit the field check builds from the input, for a full
/// analysis of it or for making test readings.  The load is a placeholder (a
/// 1 A DC current): set `dc.load` before simulating.
pub fn healthy_scenario(inp: &FieldInput) -> Result<Scenario, FieldError> {
    let mut notes = Vec::new();
    let p = plan(inp, &mut notes)?;
    let s = base_scenario(inp, &p);
    crate::params::derive(&s)?;
    Ok(s)
}

/// The healthy circuit the signatures start from (load set later).
fn base_scenario(inp: &FieldInput, p: &Plan) -> Scenario {
    let n = &inp.nameplate;
    let mut s = Scenario {
        name: "field check".into(),
        ..Default::default()
    };
    s.supply.v_ll_rms_v = p.v_ll_v;
    s.supply.f_hz = p.f_hz;
    let w = 2.0 * PI * p.f_hz;
    let z_base = p.v_ll_v * p.v_ll_v / p.rated_p_w;
    let z = n.source_z_pct.unwrap_or(SOURCE_Z_PCT) / 100.0 * z_base;
    let r = z / (1.0 + SOURCE_X_OVER_R * SOURCE_X_OVER_R).sqrt();
    s.source.impedance = SourceImpedance::Direct {
        r_ohm: r,
        l_h: r * SOURCE_X_OVER_R / w,
    };
    s.source.reactor = match n.line_reactor_z_pct {
        Some(z) if z > 0.0 => LineReactor::Percent {
            z_pct: z,
            x_over_r: REACTOR_X_OVER_R,
        },
        _ => LineReactor::None,
    };
    s.analysis.rated_power_w = p.rated_p_w;
    s.analysis.grid_points = 256;
    s.analysis.h_max = 13;
    s.analysis.transient_cycles = 0;
    s.bridge.v_threshold_v = V_DIODE_V;
    s.bridge.r_slope_ohm = 0.0;
    s.dc.choke_l_h = n.dc_choke_l_mh.unwrap_or(0.0) * 1e-3;
    s.dc.choke_r_ohm = 0.0;
    s.dc.cap_f = p.cap_f;
    s.dc.cap_esr_ohm = esr(p.cap_f);
    s.dc.bleed_r_ohm = 0.0;
    s.dc.precharge_r_ohm = 0.0;
    s.dc.precharge_stuck = false;
    s.dc.load = DcLoad::ConstantCurrent { i_a: 1.0 };
    s
}

fn esr(c_f: f64) -> f64 {
    TAN_DELTA / (2.0 * PI * 100.0 * c_f)
}

/// Phase magnitude (pu) of one low phase giving a line-voltage unbalance of
/// `u_pct` (largest deviation over mean of the three line-to-line
/// magnitudes), then scaled so the mean line-to-line magnitude is unchanged.
fn unbalance_mags(u_pct: f64) -> [f64; 3] {
    let ll = |m: [f64; 3]| -> [f64; 3] {
        let ph = |k: usize| {
            let a = -2.0 * PI / 3.0 * k as f64;
            (m[k] * a.cos(), m[k] * a.sin())
        };
        let d = |i: usize, j: usize| {
            let (a, b) = (ph(i), ph(j));
            ((a.0 - b.0).powi(2) + (a.1 - b.1).powi(2)).sqrt()
        };
        [d(0, 1), d(1, 2), d(2, 0)]
    };
    let (mut lo, mut hi) = (0.0, 0.9);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if imbalance_pct(&ll([1.0 - mid, 1.0, 1.0])) < u_pct {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let m = [1.0 - lo, 1.0, 1.0];
    let v = ll(m);
    let scale = 3f64.sqrt() / ((v[0] + v[1] + v[2]) / 3.0);
    m.map(|x| x * scale)
}

/// The scenario of one signature (load still to be set), and its model text.
fn signature_scenario(id: SignatureId, base: &Scenario, p: &Plan) -> Option<(Scenario, String)> {
    let mut s = base.clone();
    let ph = ["L1", "L2", "L3"][p.open_phase];
    let text = match id {
        SignatureId::Healthy => "the circuit as entered".to_string(),
        SignatureId::LostPhase => {
            s.supply.phase_open[p.open_phase] = true;
            format!("{ph} open at the supply, ahead of the meter: the terminal of {ph} floats")
        }
        SignatureId::OpenDiode => {
            s.bridge.open_device = Some(p.open_phase);
            format!("the upper diode of {ph} open")
        }
        SignatureId::OpenPair => {
            // Both devices of one leg open: no current can flow in that line,
            // which is the same circuit as the line open; only the terminal
            // voltage differs (it stays at the supply's value).
            s.supply.phase_open[p.open_phase] = true;
            format!("both diodes of {ph} open (modelled as {ph} open behind its terminal, the same circuit); the terminal voltages stay those of the supply")
        }
        SignatureId::Cap50 | SignatureId::Cap20 => {
            let k = if id == SignatureId::Cap50 { 0.5 } else { 0.2 };
            s.dc.cap_f = p.cap_f * k;
            s.dc.cap_esr_ohm = esr(s.dc.cap_f);
            format!(
                "bus capacitance {:.0} µF ({:.0} %), ESR {:.3} ohm",
                s.dc.cap_f * 1e6,
                k * 100.0,
                s.dc.cap_esr_ohm
            )
        }
        SignatureId::Unbalance2 | SignatureId::Unbalance5 => {
            let u = if id == SignatureId::Unbalance2 {
                2.0
            } else {
                5.0
            };
            s.supply.phase_magnitude_pu = unbalance_mags(u);
            format!("L1 phase voltage low so that the line voltages are {u} % unbalanced, their mean unchanged")
        }
        SignatureId::HighSourceZ => {
            let d = crate::params::derive(base).ok()?;
            let w = d.omega_rad_s;
            let zr = d.r_source_ohm + d.r_reactor_ohm;
            let zx = w * (d.l_source_h + d.l_reactor_h);
            let z = (zr * zr + zx * zx).sqrt() * (HIGH_Z_FACTOR - 1.0);
            let add = z / SQRT_2; // X/R = 1
            s.source.impedance = SourceImpedance::Direct {
                r_ohm: d.r_source_ohm + add,
                l_h: d.l_source_h + add / w,
            };
            format!(
                "line impedance {HIGH_Z_FACTOR} times the nominal: {:.0} mohm added per phase at X/R 1",
                z * 1e3
            )
        }
        SignatureId::PrechargeNotBypassed => {
            let r = p.precharge_r_ohm?;
            s.dc.precharge_r_ohm = r;
            s.dc.precharge_stuck = true;
            format!("precharge resistor {r:.1} ohm left in series with the bus")
        }
    };
    Some((s, text))
}

/// One simulation with its readings.
struct Run {
    sim: SimResult,
    i_dc_a: f64,
}

fn mean_line_i(sim: &SimResult) -> f64 {
    sim.roles
        .line_i
        .iter()
        .map(|&k| sim.signals[k].rms)
        .sum::<f64>()
        / 3.0
}

/// Run a signature at the load target: the DC current is adjusted until the
/// mean bus power (or the mean line current) matches.
fn run_at_load(s: &Scenario, target: Target) -> Result<Run, String> {
    let v0 = 1.35 * s.supply.v_ll_rms_v;
    let mut i_dc = match target {
        Target::Power(p) => p / v0,
        Target::LineCurrent(i) => i * (1.5f64).sqrt(),
    };
    let mut sc = s.clone();
    let d = crate::params::derive(s).map_err(|e| e.to_string())?;
    let mut last: Option<Run> = None;
    for _ in 0..12 {
        sc.dc.load = DcLoad::ConstantCurrent { i_a: i_dc };
        let sim = crate::sim::simulate(&sc, &d).map_err(|e| e.to_string())?;
        let v = sim.signals[sim.roles.v_dc].mean;
        if !v.is_finite() || v < 0.3 * SQRT_2 * s.supply.v_ll_rms_v {
            return Err(format!(
                "the bus falls below {:.0} V: the front end cannot carry this load in this state (expect an undervoltage trip)",
                0.3 * SQRT_2 * s.supply.v_ll_rms_v
            ));
        }
        let next = match target {
            Target::Power(p) => p / v,
            Target::LineCurrent(i) => {
                let im = mean_line_i(&sim);
                if im <= 0.0 {
                    return Err("no line current flows".into());
                }
                i_dc * i / im
            }
        };
        let done = (next - i_dc).abs() <= 2e-3 * i_dc;
        last = Some(Run { sim, i_dc_a: i_dc });
        i_dc = next;
        if done {
            return last.ok_or_else(|| "no run".into());
        }
    }
    match last {
        Some(r) => {
            let v = r.sim.signals[r.sim.roles.v_dc].mean;
            match target {
                Target::Power(p) if (v * r.i_dc_a - p).abs() > 0.02 * p => Err(
                    "the bus does not settle at this load: the front end cannot carry it in this state (expect an undervoltage trip)".into(),
                ),
                _ => Ok(r),
            }
        }
        None => Err("no run".into()),
    }
}

fn rms3(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len()).saturating_sub(1).max(1);
    (a.iter()
        .zip(b)
        .take(n)
        .map(|(x, y)| (x - y).powi(2))
        .sum::<f64>()
        / n as f64)
        .sqrt()
}

fn predicted(run: &Run, s: &Scenario, id: SignatureId) -> Predicted {
    let sim = &run.sim;
    let v = &sim.signals[sim.roles.v_dc];
    let f = s.supply.f_hz;
    let ripple = (v.rms * v.rms - v.mean * v.mean).max(0.0).sqrt();
    let dom = v
        .harmonics
        .iter()
        .max_by(|a, b| a.rms.total_cmp(&b.rms))
        .map(|h| h.order as f64 * f)
        .unwrap_or(0.0);
    let largest = v.harmonics.iter().map(|h| h.rms).fold(0.0, f64::max);
    let mut near: Vec<(f64, f64)> = v
        .harmonics
        .iter()
        .filter(|h| h.order > 0 && h.rms >= largest / SQRT_2 && largest > 0.0)
        .map(|h| (h.rms, h.order as f64 * f))
        .collect();
    crate::sim::sort_small_by(&mut near, |a, b| b.0.total_cmp(&a.0));
    let i = sim.roles.line_i.map(|k| sim.signals[k].rms);
    let pc = sim.roles.pcc_v;
    let mut ll = [0.0; 3];
    for k in 0..3 {
        ll[k] = rms3(
            &sim.signals[pc[k]].samples,
            &sim.signals[pc[(k + 1) % 3]].samples,
        );
    }
    if id == SignatureId::OpenPair {
        // The terminals are on the supply side of the break: the EMF's
        // line-to-line values.
        let m = s.supply.phase_magnitude_pu;
        let ph = |k: usize| {
            let a = (-120.0 * k as f64 + s.supply.phase_angle_offset_deg[k]).to_radians();
            (m[k] * a.cos(), m[k] * a.sin())
        };
        for k in 0..3 {
            let (a, b) = (ph(k), ph((k + 1) % 3));
            ll[k] = ((a.0 - b.0).powi(2) + (a.1 - b.1).powi(2)).sqrt() / 3f64.sqrt()
                * s.supply.v_ll_rms_v;
        }
    }
    let n = v.samples.len().saturating_sub(1).max(1);
    let wave: Vec<f64> = (0..64)
        .map(|j| v.samples[(j * n / 64).min(v.samples.len() - 1)] - v.mean)
        .collect();
    Predicted {
        dc_mean_v: v.mean,
        ripple_rms_v: ripple,
        ripple_dominant_hz: dom,
        ripple_near_dominant_hz: near.into_iter().map(|x| x.1).collect(),
        dc_min_v: v.min,
        dc_max_v: v.max,
        line_i_rms_a: i,
        current_imbalance_pct: imbalance_pct(&i),
        terminal_v_ll_rms_v: ll,
        voltage_unbalance_pct: imbalance_pct(&ll),
        ripple_wave_v: wave,
    }
}

fn term(reading: &str, m: f64, p: f64, sigma: f64, z: f64) -> Term {
    Term {
        reading: reading.into(),
        measured: m,
        predicted: p,
        sigma,
        z: z.clamp(-Z_CAP, Z_CAP),
    }
}

/// The distance of one signature from the readings (see [`Distance`]).
fn distance(inp: &FieldInput, p: &Plan, id: SignatureId, pr: &Predicted) -> Option<Distance> {
    let r = &inp.readings;
    let m = &inp.meter;
    // A bank short of capacitance differs from a healthy one in its ripple;
    // its few volts of mean shift are within the model's own uncertainty.
    // Without a ripple reading it is not ranked (see `verdict`).
    if needs_ripple(id) && r.dc_bus_ac_rms_v.is_none() && r.ripple_hz.is_none() {
        return None;
    }
    let mut terms = Vec::new();
    if let Some(vm) = r.dc_bus_mean_v {
        // The linear sum, as in the band the report shows ("a meter on DC
        // may read"): a reading inside that band is within tolerance here.
        let s = m.dc_v.of(vm) + pr.dc_mean_v * p.u_supply + pr.dc_mean_v * 0.01;
        terms.push(term(
            "DC bus mean, V",
            vm,
            pr.dc_mean_v,
            s,
            (vm - pr.dc_mean_v) / s,
        ));
    }
    if let Some(va) = r.dc_bus_ac_rms_v {
        let a = m.ac_v.digits * m.ac_v.resolution + 1e-3;
        let model = if p.cap_estimated { 0.5 } else { 0.25 };
        let s = ((m.ac_v.pct / 100.0).powi(2) + model * model).sqrt();
        terms.push(term(
            "DC bus AC reading (ripple RMS), V",
            va,
            pr.ripple_rms_v,
            s,
            ((va + a) / (pr.ripple_rms_v + a)).ln() / s,
        ));
    }
    if let Some(fm) = r.ripple_hz {
        let s = 0.1;
        // The component within 3 dB of the largest nearest the counter's
        // reading (an open diode's ripple has 50 and 100 Hz nearly equal).
        let near_hz = pr
            .ripple_near_dominant_hz
            .iter()
            .cloned()
            .chain(std::iter::once(pr.ripple_dominant_hz))
            .min_by(|a, b| {
                (fm / a.max(1e-3))
                    .ln()
                    .abs()
                    .total_cmp(&(fm / b.max(1e-3)).ln().abs())
            })
            .unwrap_or(pr.ripple_dominant_hz);
        terms.push(term(
            "ripple frequency, Hz",
            fm,
            near_hz,
            s,
            (fm / near_hz.max(1e-3)).ln() / s,
        ));
    }
    if let Some(i) = r.line_i_rms_a {
        let mean = (i[0] + i[1] + i[2]) / 3.0;
        let im = imbalance_pct(&i);
        let tol = m.current.pct + m.current.digits * m.current.resolution / mean * 100.0;
        let s = (tol * tol + (3.0 + 0.2 * pr.current_imbalance_pct).powi(2)).sqrt();
        terms.push(term(
            "line current imbalance, %",
            im,
            pr.current_imbalance_pct,
            s,
            (im - pr.current_imbalance_pct) / s,
        ));
    }
    if let Some(v) = r.v_ll_rms_v {
        let mean = (v[0] + v[1] + v[2]) / 3.0;
        let um = imbalance_pct(&v);
        let tol = m.ac_v.pct + m.ac_v.digits * m.ac_v.resolution / mean * 100.0;
        let model = if id == SignatureId::LostPhase {
            15.0
        } else {
            0.3
        };
        let s = (tol * tol + model * model).sqrt();
        terms.push(term(
            "line voltage unbalance, %",
            um,
            pr.voltage_unbalance_pct,
            s,
            (um - pr.voltage_unbalance_pct) / s,
        ));
    }
    if terms.is_empty() {
        return None;
    }
    let value = (terms.iter().map(|t| t.z * t.z).sum::<f64>() / terms.len() as f64).sqrt();
    Some(Distance { value, terms })
}

/// Signatures told apart from a healthy front end by the ripple only.
fn needs_ripple(id: SignatureId) -> bool {
    matches!(id, SignatureId::Cap50 | SignatureId::Cap20)
}

/// Run the field check.
pub fn check(inp: &FieldInput) -> Result<FieldReport, FieldError> {
    let mut assumptions = Vec::new();
    let mut warnings = Vec::new();
    let p = plan(inp, &mut assumptions)?;
    let base = base_scenario(inp, &p);
    crate::params::derive(&base)?;

    let mut signatures = Vec::new();
    let mut healthy: Option<(Predicted, f64)> = None;
    for id in SignatureId::ALL {
        let Some((s, model)) = signature_scenario(id, &base, &p) else {
            continue;
        };
        let (predicted_v, failed, load_p) = match run_at_load(&s, p.target) {
            Ok(run) => {
                let pr = predicted(&run, &s, id);
                let lp = run.sim.p_load_w;
                (Some(pr), None, lp)
            }
            Err(e) => (
                None,
                Some(e),
                match p.target {
                    Target::Power(w) => w,
                    Target::LineCurrent(_) => 0.0,
                },
            ),
        };
        if id == SignatureId::Healthy {
            match &predicted_v {
                Some(pr) => healthy = Some((pr.clone(), load_p)),
                None => {
                    return Err(err(
                        "nameplate",
                        &format!(
                            "the healthy front end cannot carry the load as entered: {}",
                            failed.unwrap_or_default()
                        ),
                    ))
                }
            }
        }
        let dist = predicted_v
            .as_ref()
            .and_then(|pr| distance(inp, &p, id, pr));
        signatures.push(Signature {
            id,
            title: id.title().into(),
            model,
            load_p_w: load_p,
            predicted: predicted_v,
            failed,
            distance: dist,
            advice: id.advice().into(),
        });
    }
    let (hp, load_p_w) = healthy.ok_or_else(|| err("nameplate", "no healthy signature"))?;

    // Expected bus.
    let dc = inp.meter.dc_v;
    let no_load_v = SQRT_2 * p.v_ll_max_v - 2.0 * V_DIODE_V;
    let band = |x: f64| {
        let lo = x * (1.0 - p.u_supply);
        let hi = x * (1.0 + p.u_supply);
        [lo - dc.of(lo), hi + dc.of(hi)]
    };
    let no_load_band_v = band(no_load_v);
    let at_load_v = hp.dc_mean_v;
    let at_load_band_v = {
        let b = band(at_load_v);
        [b[0] - 0.01 * at_load_v, b[1] + 0.01 * at_load_v]
    };
    let load_basis = match p.target {
        Target::Power(w) => format!(
            "present load {:.2} kW; the inverter as a DC current constant within the period, set so that the mean bus power is the load (a constant-power load on average)",
            w / 1e3
        ),
        Target::LineCurrent(i) => format!(
            "present load from the mean line current {i:.2} A; each signature runs at the DC current that reproduces it (the inverter as a DC current constant within the period)"
        ),
    };
    let undervoltage = inp.trips.undervoltage_v.map(|t| {
        let m = at_load_v - t;
        TripMargin {
            trip_v: t,
            margin_v: m,
            margin_pct: m / at_load_v * 100.0,
            margin_worst_v: at_load_band_v[0] - t,
            note: if at_load_band_v[0] <= t {
                "the low edge of the expected band reaches the undervoltage trip: a low supply alone can trip the drive at this load".into()
            } else {
                "expected bus at load minus the trip; worst: the low edge of the band".into()
            },
        }
    });
    let overvoltage = inp.trips.overvoltage_v.map(|t| {
        let m = t - no_load_v;
        TripMargin {
            trip_v: t,
            margin_v: m,
            margin_pct: m / no_load_v * 100.0,
            margin_worst_v: t - no_load_band_v[1],
            note: if no_load_band_v[1] >= t {
                "the high edge of the no-load band reaches the overvoltage trip: a high supply alone can trip the drive".into()
            } else {
                "trip minus the expected bus at no load; worst: the high edge of the band; braking (regeneration) raises the bus further and is not modelled".into()
            },
        }
    });
    let supply_basis = match inp.readings.v_ll_rms_v {
        Some(v) if imbalance_pct(&v) > MISSING_PHASE_UNBALANCE_PCT => {
            "largest line voltage reading (the readings look like a missing phase)".to_string()
        }
        Some(_) => "mean of the three line voltage readings".to_string(),
        None => "nominal (not measured), plus or minus 10 %".to_string(),
    };
    assumptions.push("no load: the bus charges to the peak of the largest line voltage less two diode drops, sqrt2 x V_LL - 2 V_diode (common practice; a flat-topped supply, from other rectifier loads, reads a few percent lower)".into());

    // Measured.
    let r = &inp.readings;
    let measured = Measured {
        v_ll_mean_v: r.v_ll_rms_v.map(|v| (v[0] + v[1] + v[2]) / 3.0),
        voltage_unbalance_pct: r.v_ll_rms_v.map(|v| imbalance_pct(&v)),
        line_i_mean_a: r.line_i_rms_a.map(|i| (i[0] + i[1] + i[2]) / 3.0),
        current_imbalance_pct: r.line_i_rms_a.map(|i| imbalance_pct(&i)),
        lowest_current_phase: r.line_i_rms_a.map(|_| p.open_phase + 1),
    };
    if r.dc_bus_mean_v.is_none() && r.dc_bus_ac_rms_v.is_none() {
        warnings.push("no bus reading entered: only the expected values are shown".into());
    }

    let mut verdict = verdict(&signatures);
    // The bank from the ripple, when the readings point at the bank (not at
    // a fault whose own ripple would be read as lost capacitance).
    let lead = verdict
        .ranking
        .first()
        .filter(|x| x.distance.is_some())
        .map(|x| x.id);
    let bank_estimate = match (r.dc_bus_ac_rms_v, lead) {
        (Some(va), Some(SignatureId::Healthy | SignatureId::Cap50 | SignatureId::Cap20)) => {
            bank_estimate(&signatures, va, p.cap_estimated)
        }
        _ => None,
    };
    if let Some(b) = &bank_estimate {
        // Before the safety line, which stays last.
        let at = verdict.next.len().saturating_sub(1);
        verdict.next.insert(at, b.note.clone());
    }
    Ok(FieldReport {
        version: env!("CARGO_PKG_VERSION").to_string(),
        safety: safety_text(),
        expected: Expected {
            supply_v_ll_rms_v: p.v_ll_v,
            supply_basis,
            supply_rel_uncertainty: p.u_supply,
            no_load_v,
            no_load_band_v,
            at_load_v,
            at_load_band_v,
            at_load_ripple_rms_v: hp.ripple_rms_v,
            load_p_w,
            load_basis,
            undervoltage,
            overvoltage,
        },
        measured,
        signatures,
        verdict,
        bank_estimate,
        assumptions,
        warnings,
    })
}

fn verdict(sigs: &[Signature]) -> Verdict {
    let mut ranking: Vec<Ranked> = sigs
        .iter()
        .map(|s| Ranked {
            id: s.id,
            title: s.title.clone(),
            distance: s.distance.as_ref().map(|d| d.value),
        })
        .collect();
    crate::sim::sort_small_by(&mut ranking, |a, b| {
        a.distance
            .unwrap_or(f64::INFINITY)
            .total_cmp(&b.distance.unwrap_or(f64::INFINITY))
    });
    let healthy_d = ranking
        .iter()
        .find(|r| r.id == SignatureId::Healthy)
        .and_then(|r| r.distance);
    let healthy_fits = healthy_d.is_some_and(|d| d <= 1.0);
    let mut next = Vec::new();
    let summary = match ranking.first().and_then(|r| r.distance.map(|d| (r, d))) {
        None => "No readings to compare: the expected values and the signatures are shown for reference.".to_string(),
        Some((best, d_best)) => {
            let others: Vec<String> = ranking
                .iter()
                .filter(|r| r.id != SignatureId::Healthy && r.distance.is_some_and(|d| d <= 1.0))
                .map(|r| r.title.clone())
                .collect();
            let mut s = String::new();
            if healthy_fits {
                s.push_str(&format!(
                    "The readings are consistent with a healthy front end (distance {:.2}; 1 or less fits within tolerance).",
                    healthy_d.unwrap_or(0.0)
                ));
                if !others.is_empty() {
                    s.push_str(&format!(
                        " They are also consistent with: {}; these readings cannot tell them apart.",
                        others.join("; ")
                    ));
                }
            } else {
                s.push_str(&format!(
                    "The readings fit best with: {} (distance {:.2}).",
                    best.title, d_best
                ));
                if let Some(second) = ranking
                    .get(1)
                    .filter(|r| r.id != SignatureId::Healthy)
                    .and_then(|r| r.distance.map(|d| (r, d)))
                {
                    s.push_str(&format!(
                        " Next: {} ({:.2}).",
                        second.0.title, second.1
                    ));
                }
                if let Some(h) = healthy_d {
                    s.push_str(&format!(
                        " A healthy front end is at distance {h:.2}, outside the tolerance."
                    ));
                }
                if d_best > 1.0 {
                    s.push_str(" No signature fits within tolerance: the cause may be one not modelled here, several at once, or a reading may be off; repeat the readings.");
                }
            }
            s.push_str(" This is an indication from the readings, not a diagnosis.");
            let lead = if healthy_fits {
                SignatureId::Healthy
            } else {
                best.id
            };
            if let Some(sg) = sigs.iter().find(|s| s.id == lead) {
                next.push(sg.advice.clone());
            }
            if !healthy_fits {
                if let Some(second) = ranking.get(1) {
                    if second.distance.is_some_and(|d| d <= 1.0 || d <= 1.2 * d_best) {
                        if let Some(sg) = sigs.iter().find(|s| s.id == second.id) {
                            next.push(format!("Also possible: {}", sg.advice));
                        }
                    }
                }
            }
            s
        }
    };
    let failed: Vec<String> = sigs
        .iter()
        .filter(|s| s.failed.is_some())
        .map(|s| format!("{}: {}", s.title, s.failed.clone().unwrap_or_default()))
        .collect();
    if !failed.is_empty() {
        next.push(format!(
            "Not ranked: at this load the drive could not run that way (it would trip or overheat), so if it is running at this load these are ruled out; if instead it trips as the load comes on, suspect them first. {}.",
            failed.join("; ")
        ));
    }
    if sigs
        .iter()
        .any(|s| needs_ripple(s.id) && s.predicted.is_some() && s.distance.is_none())
        && sigs.iter().any(|s| s.distance.is_some())
    {
        next.push("The capacitance signatures are not ranked: a bank short of capacitance shows in the ripple, so read the bus with the meter on AC (and its frequency) to check the capacitors.".into());
    }
    next.push("Before any hands-on check, follow the safety panel.".into());
    Verdict {
        ranking,
        healthy_fits,
        summary,
        next,
    }
}

/// A one-line sketch of a waveform (eight block heights), scaled to its own
/// peak-to-peak.
fn sketch(w: &[f64], width: usize) -> String {
    const BLOCKS: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];
    if w.is_empty() {
        return String::new();
    }
    let (lo, hi) = w
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let span = (hi - lo).max(1e-12);
    (0..width)
        .map(|j| {
            let x = w[j * w.len() / width];
            BLOCKS[(((x - lo) / span) * 7.0).round().clamp(0.0, 7.0) as usize]
        })
        .collect()
}

/// Plain-text rendering of a field report (used by the command line).
pub fn text(r: &FieldReport) -> String {
    use std::fmt::Write;
    let mut o = String::new();
    let _ = writeln!(o, "SAFETY (read first)");
    for s in &r.safety {
        let _ = writeln!(o, "  * {s}");
    }
    let _ = writeln!(o, "\nField check, rectifield {}", r.version);
    let _ = writeln!(o, "\nVerdict\n  {}", r.verdict.summary);
    for n in &r.verdict.next {
        let _ = writeln!(o, "  - {n}");
    }
    let e = &r.expected;
    let _ = writeln!(o, "\nExpected DC bus");
    let _ = writeln!(
        o,
        "  supply used          {:8.1} V line-to-line ({}, uncertainty {:.1} %)",
        e.supply_v_ll_rms_v,
        e.supply_basis,
        e.supply_rel_uncertainty * 100.0
    );
    let _ = writeln!(
        o,
        "  at no load           {:8.1} V   a meter on DC may read {:.1} to {:.1} V",
        e.no_load_v, e.no_load_band_v[0], e.no_load_band_v[1]
    );
    let _ = writeln!(
        o,
        "  at the present load  {:8.1} V   a meter on DC may read {:.1} to {:.1} V",
        e.at_load_v, e.at_load_band_v[0], e.at_load_band_v[1]
    );
    let _ = writeln!(
        o,
        "  ripple at load       {:8.2} V   (true-RMS meter on AC)",
        e.at_load_ripple_rms_v
    );
    let _ = writeln!(
        o,
        "  load                 {:8.2} kW  {}",
        e.load_p_w / 1e3,
        e.load_basis
    );
    for (name, t) in [
        ("undervoltage trip", &e.undervoltage),
        ("overvoltage trip", &e.overvoltage),
    ] {
        if let Some(t) = t {
            let _ = writeln!(
                o,
                "  {name:<20} {:8.1} V   margin {:.1} V ({:.1} %), worst {:.1} V: {}",
                t.trip_v, t.margin_v, t.margin_pct, t.margin_worst_v, t.note
            );
        }
    }
    let m = &r.measured;
    let _ = writeln!(o, "\nFrom the readings");
    if let (Some(v), Some(u)) = (m.v_ll_mean_v, m.voltage_unbalance_pct) {
        let _ = writeln!(
            o,
            "  line voltage mean {v:.1} V, unbalance {u:.2} % (largest deviation from the mean)"
        );
    }
    if let (Some(i), Some(u)) = (m.line_i_mean_a, m.current_imbalance_pct) {
        let _ = writeln!(
            o,
            "  line current mean {i:.2} A, imbalance {u:.1} %, lowest on L{}",
            m.lowest_current_phase.unwrap_or(0)
        );
    }
    let _ = writeln!(
        o,
        "\nSignatures, best fit first (distance 1 or less: fits within tolerance)"
    );
    let _ = writeln!(
        o,
        "  {:>8}  {:>8} {:>8} {:>6} {:>7} {:>7}  {:<24}  signature",
        "distance", "DC V", "AC V", "Hz", "I imb%", "V unb%", "ripple over one period"
    );
    for rk in &r.verdict.ranking {
        let Some(s) = r.signatures.iter().find(|s| s.id == rk.id) else {
            continue;
        };
        let d = rk
            .distance
            .map(|d| format!("{d:8.2}"))
            .unwrap_or_else(|| "       -".into());
        match &s.predicted {
            Some(p) => {
                let _ = writeln!(
                    o,
                    "  {d}  {:8.1} {:8.2} {:6.0} {:7.1} {:7.2}  {:<24}  {} (ripple {:.1} V pk-pk)",
                    p.dc_mean_v,
                    p.ripple_rms_v,
                    p.ripple_dominant_hz,
                    p.current_imbalance_pct,
                    p.voltage_unbalance_pct,
                    sketch(&p.ripple_wave_v, 24),
                    s.title,
                    p.dc_max_v - p.dc_min_v
                );
            }
            None => {
                let _ = writeln!(
                    o,
                    "  {d}  {:>48}  {}: {}",
                    "",
                    s.title,
                    s.failed.clone().unwrap_or_default()
                );
            }
        }
    }
    let _ = writeln!(o, "\nHow each signature was modelled");
    for s in &r.signatures {
        let _ = writeln!(o, "  - {}: {}", s.title, s.model);
    }
    let _ = writeln!(o, "\nAssumptions");
    for a in &r.assumptions {
        let _ = writeln!(o, "  - {a}");
    }
    for w in &r.warnings {
        let _ = writeln!(o, "  warning: {w}");
    }
    let _ = write!(
        o,
        "\nSAFETY: DC buses and capacitors can kill; local codes and the maker's manual govern."
    );
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bank_fraction_interpolates_in_logarithms() {
        let pts = [(1.0, 5.0), (0.5, 10.0), (0.2, 25.0)];
        let f = |r: f64| bank_fraction(&pts, r).unwrap();
        assert!((f(10.0).0 - 0.5).abs() < 1e-12 && !f(10.0).1);
        assert!((f(5.0).0 - 1.0).abs() < 1e-12);
        // Ripple proportional to 1/C on the first segment: half the ripple
        // of the 100 % bank is a bank twice the size, extrapolated.
        let (x, extra) = f(2.5);
        assert!((x - 2.0).abs() < 1e-12 && extra);
        // Between 50 and 20 %: the geometric interpolation.
        let r = (10.0f64 * 25.0).sqrt();
        assert!((f(r).0 - (0.5f64 * 0.2).sqrt()).abs() < 1e-12);
        // Not monotone: no estimate.
        assert!(bank_fraction(&[(1.0, 5.0), (0.5, 4.0)], 4.5).is_none());
    }

    #[test]
    fn unbalance_construction_hits_the_target() {
        for u in [2.0, 5.0] {
            let m = unbalance_mags(u);
            // Recompute the line magnitudes and their unbalance.
            let ph = |k: usize| {
                let a = -2.0 * PI / 3.0 * k as f64;
                (m[k] * a.cos(), m[k] * a.sin())
            };
            let d = |i: usize, j: usize| {
                let (a, b) = (ph(i), ph(j));
                ((a.0 - b.0).powi(2) + (a.1 - b.1).powi(2)).sqrt()
            };
            let ll = [d(0, 1), d(1, 2), d(2, 0)];
            assert!((imbalance_pct(&ll) - u).abs() < 1e-6);
            let mean = (ll[0] + ll[1] + ll[2]) / 3.0;
            assert!((mean - 3f64.sqrt()).abs() < 1e-9);
        }
    }

    #[test]
    fn bad_fields_are_named() {
        let mut i = FieldInput::default();
        i.nameplate.rating_kw = Some(7.5);
        i.readings.v_ll_rms_v = Some([400.0, -1.0, 400.0]);
        assert_eq!(check(&i).unwrap_err().field, "readings.v_ll_rms_v[1]");
        let mut i = FieldInput::default();
        assert_eq!(check(&i).unwrap_err().field, "nameplate.rating_kw");
        i.nameplate.rating_kw = Some(7.5);
        i.meter.dc_v.pct = f64::NAN;
        assert_eq!(check(&i).unwrap_err().field, "meter.dc_v.pct");
        let e = from_json(r#"{"nameplate": {"rating_kw": "x"}}"#).unwrap_err();
        assert_eq!(e.field, "nameplate.rating_kw");
        let e = from_json(r#"{"readings": {"bogus": 1}}"#).unwrap_err();
        assert_eq!(e.field, "readings.bogus");
    }
}
