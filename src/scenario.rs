//! The one scenario format: what the page, the command line and saved files share.
//!
//! Units are in the field names (`_v`, `_hz`, `_h`, `_ohm`, `_f`, `_a`, `_w`,
//! `_deg`, `_pct`).  Voltages are RMS line-to-line unless the name says
//! otherwise.  Every field has a default, so `{}` is a valid scenario; unknown
//! fields are rejected with their path.

use serde::{Deserialize, Serialize};

/// Largest scenario file accepted, bytes (a scenario is a few kB).
pub const MAX_FILE_BYTES: usize = 1 << 20;

/// Current schema version written by this build.
pub const SCHEMA_VERSION: u32 = 2;

/// What changed between schema versions (kept for migration):
/// * 1 -> 2: `compliance` settings, `dc.precharge_stuck` and the capacitor
///   thermal fields (`dc.cap_rth_k_per_w`, `dc.cap_rated_life_h`,
///   `dc.cap_rated_temp_c`, `dc.ambient_c`) were added; a version-1 file has
///   none of them and takes their defaults.  The default output grid changed
///   from 720 to 1024 points; a version-1 file without `analysis.grid_points`
///   keeps 720 so that it reproduces its old figures.
pub fn migrate(value: &mut serde_json::Value, from: u32) -> Vec<String> {
    let mut notes = Vec::new();
    if from < 2 {
        if let Some(obj) = value.as_object_mut() {
            let analysis = obj
                .entry("analysis")
                .or_insert_with(|| serde_json::json!({}));
            if let Some(a) = analysis.as_object_mut() {
                a.entry("grid_points").or_insert(720.into());
            }
            notes
                .push("migrated from schema version 1: new fields take their defaults".to_string());
        }
    }
    if let Some(obj) = value.as_object_mut() {
        obj.insert("schema_version".into(), SCHEMA_VERSION.into());
    }
    notes
}

/// A complete case.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Scenario {
    pub schema_version: u32,
    /// Free text; never interpreted as markup.
    pub name: String,
    pub notes: String,
    pub supply: Supply,
    pub source: Source,
    pub bridge: Bridge,
    pub dc: DcSide,
    /// Field-level default: a file without `analysis` gets
    /// `AnalysisSettings::default()` (rating 0 = from the load), not the
    /// default scenario's 45 kW rating.
    #[serde(default)]
    pub analysis: AnalysisSettings,
    /// Grid compliance settings (see `crate::compliance`).
    #[serde(default)]
    pub compliance: crate::compliance::ComplianceSettings,
}

impl Default for Scenario {
    fn default() -> Self {
        Scenario {
            schema_version: SCHEMA_VERSION,
            name: "Drive front end, 400 V 50 Hz".into(),
            notes: String::new(),
            supply: Supply::default(),
            source: Source::default(),
            bridge: Bridge::default(),
            dc: DcSide::default(),
            // The drive's rating, so that changing its load keeps the 3 %
            // reactor's henries (a rating of 0 would follow the load).
            analysis: AnalysisSettings {
                rated_power_w: 45e3,
                ..AnalysisSettings::default()
            },
            compliance: Default::default(),
        }
    }
}

/// One background voltage harmonic of the supply.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VoltageHarmonic {
    /// Harmonic order (2..=50).
    pub order: u32,
    /// Magnitude in percent of the fundamental phase voltage.
    pub magnitude_pct: f64,
    /// Phase of the harmonic in degrees, referred to its own order
    /// (`v_h = V_h cos(h (w t) + phase)` for phase a, sequence follows order).
    pub phase_deg: f64,
}

/// The three-phase supply (an ideal EMF behind the source impedance).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Supply {
    /// Nominal line-to-line RMS voltage, V.
    pub v_ll_rms_v: f64,
    /// Frequency, Hz (1 to 1000).
    pub f_hz: f64,
    /// Per-phase magnitude, per unit of nominal (a, b, c).
    pub phase_magnitude_pu: [f64; 3],
    /// Per-phase angle offset added to 0, -120, +120 degrees (a, b, c).
    pub phase_angle_offset_deg: [f64; 3],
    /// Phases that are open (a lost phase), a, b, c.
    pub phase_open: [bool; 3],
    /// Background voltage harmonics.
    pub harmonics: Vec<VoltageHarmonic>,
}

impl Default for Supply {
    fn default() -> Self {
        Supply {
            v_ll_rms_v: 400.0,
            f_hz: 50.0,
            phase_magnitude_pu: [1.0; 3],
            phase_angle_offset_deg: [0.0; 3],
            phase_open: [false; 3],
            harmonics: Vec::new(),
        }
    }
}

/// How the source impedance per phase is given.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum SourceImpedance {
    /// Resistance and inductance per phase directly.
    Direct { r_ohm: f64, l_h: f64 },
    /// A supply transformer: rating, impedance in percent on its rating, X/R.
    Transformer {
        s_kva: f64,
        z_pct: f64,
        x_over_r: f64,
    },
    /// Short-circuit level at the point of common coupling, MVA, and X/R.
    ShortCircuitMva { s_sc_mva: f64, x_over_r: f64 },
    /// Short-circuit current at the point of common coupling, kA, and X/R.
    ShortCircuitKa { i_sc_ka: f64, x_over_r: f64 },
}

/// A line reactor between the supply and the bridge.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum LineReactor {
    None,
    /// Inductance per phase, H, with its resistance.
    Henry {
        l_h: f64,
        r_ohm: f64,
    },
    /// Impedance in percent on the load's rating (`rated_power_w`), X/R of the reactor.
    Percent {
        z_pct: f64,
        x_over_r: f64,
    },
}

/// Supply impedance and any line reactor.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Source {
    pub impedance: SourceImpedance,
    pub reactor: LineReactor,
}

impl Default for Source {
    fn default() -> Self {
        Source {
            impedance: SourceImpedance::ShortCircuitMva {
                s_sc_mva: 10.0,
                x_over_r: 8.0,
            },
            reactor: LineReactor::Percent {
                z_pct: 3.0,
                x_over_r: 30.0,
            },
        }
    }
}

/// Bridge topology.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BridgeKind {
    SixPulseDiode,
    SixPulseThyristor,
    ThreePulseDiode,
    ThreePulseThyristor,
    /// Two six-pulse bridges on star and delta secondaries, outputs in series.
    TwelvePulseSeries,
    /// The same, outputs in parallel through an interphase reactor.
    TwelvePulseParallel,
}

impl BridgeKind {
    pub fn is_controlled(self) -> bool {
        matches!(
            self,
            BridgeKind::SixPulseThyristor | BridgeKind::ThreePulseThyristor
        )
    }
}

/// Device model and bridge choice.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Bridge {
    pub kind: BridgeKind,
    /// Firing angle from the natural commutation point, degrees (thyristor bridges).
    pub alpha_deg: f64,
    /// Gate pulse width, degrees.
    pub gate_width_deg: f64,
    /// Device threshold voltage, V (0 = ideal).
    pub v_threshold_v: f64,
    /// Device slope resistance, ohm (0 = ideal).
    pub r_slope_ohm: f64,
    /// One device set open (a fault): index as listed by the engine
    /// (six-pulse: 0..5 = a+, b+, c+, a-, b-, c-), or none.
    pub open_device: Option<usize>,
    /// Twelve-pulse: interphase reactor inductance (parallel connection), H.
    pub interphase_l_h: f64,
}

impl Default for Bridge {
    fn default() -> Self {
        Bridge {
            kind: BridgeKind::SixPulseDiode,
            alpha_deg: 0.0,
            gate_width_deg: 120.0,
            v_threshold_v: 0.0,
            r_slope_ohm: 0.0,
            open_device: None,
            interphase_l_h: 10e-3,
        }
    }
}

/// What the DC bus feeds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum DcLoad {
    /// Resistor, ohm.
    Resistor { r_ohm: f64 },
    /// Resistor and inductor in series, with an optional back-EMF (negative to invert).
    Rle { r_ohm: f64, l_h: f64, e_v: f64 },
    /// An ideal constant current, A.
    ConstantCurrent { i_a: f64 },
    /// A constant-power load (a drive's inverter), W.
    ConstantPower { p_w: f64 },
}

/// DC side: an optional choke and an optional capacitor bank ahead of the load.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct DcSide {
    /// DC choke inductance, H (0 = none).
    pub choke_l_h: f64,
    /// DC choke resistance, ohm.
    pub choke_r_ohm: f64,
    /// Bus capacitance, F (0 = none).
    pub cap_f: f64,
    /// Capacitor equivalent series resistance, ohm.
    pub cap_esr_ohm: f64,
    /// Bleed resistor across the bus, ohm (0 = none).
    pub bleed_r_ohm: f64,
    pub load: DcLoad,
    /// Precharge resistor in series with the bus, ohm (0 = none), for the power-up transient.
    pub precharge_r_ohm: f64,
    /// Precharge bypass after this time, s (0 = by voltage only).
    pub precharge_bypass_s: f64,
    /// Precharge bypass when the bus reaches this fraction of its peak line voltage (0 = by time only).
    pub precharge_bypass_pu: f64,
    /// Precharge resistor left in circuit in steady state (a failed bypass contactor).
    pub precharge_stuck: bool,
    /// Capacitor bank thermal resistance core to ambient, K/W.
    pub cap_rth_k_per_w: f64,
    /// Capacitor rated life at its rated temperature, hours.
    pub cap_rated_life_h: f64,
    /// Capacitor rated (category) temperature, degrees C.
    pub cap_rated_temp_c: f64,
    /// Ambient temperature around the capacitors, degrees C.
    pub ambient_c: f64,
}

impl Default for DcSide {
    fn default() -> Self {
        DcSide {
            choke_l_h: 0.0,
            choke_r_ohm: 0.0,
            cap_f: 2.2e-3,
            cap_esr_ohm: 0.02,
            bleed_r_ohm: 0.0,
            load: DcLoad::ConstantPower { p_w: 45e3 },
            precharge_r_ohm: 0.0,
            precharge_bypass_s: 0.0,
            precharge_bypass_pu: 0.0,
            precharge_stuck: false,
            cap_rth_k_per_w: 1.5,
            cap_rated_life_h: 5000.0,
            cap_rated_temp_c: 105.0,
            ambient_c: 40.0,
        }
    }
}

/// Analysis settings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct AnalysisSettings {
    /// Highest harmonic order reported (1..=100).
    pub h_max: u32,
    /// Output samples per period (uniform grid).
    pub grid_points: usize,
    /// Rated load power, W, used for reactor percent and the demand current (0 = from the load).
    pub rated_power_w: f64,
    /// Maximum demand load current IL for TDD, A RMS (0 = the rated fundamental
    /// current `rated_power_w / (sqrt3 V_LL)`).
    pub demand_current_a: f64,
    /// Power-up transient length in supply cycles (0 = none).
    pub transient_cycles: u32,
}

impl Default for AnalysisSettings {
    fn default() -> Self {
        AnalysisSettings {
            h_max: 50,
            grid_points: 1024,
            rated_power_w: 0.0,
            demand_current_a: 0.0,
            transient_cycles: 0,
        }
    }
}

/// Parse a scenario from JSON text, naming the path of a bad field.
pub fn from_json(text: &str) -> Result<Scenario, String> {
    let mut value: serde_json::Value =
        serde_json::from_str(text).map_err(|e| format!("not valid JSON: {e}"))?;
    if let Some(obj) = value.as_object_mut() {
        let ver = match obj.get("schema_version") {
            None => SCHEMA_VERSION as u64,
            Some(v) => v.as_u64().ok_or("schema_version: must be a whole number")?,
        };
        if ver == 0 || ver > SCHEMA_VERSION as u64 {
            return Err(format!(
                "schema_version: {ver} is not supported by this build (it reads 1 to {SCHEMA_VERSION}; a newer Rectifield wrote this file)"
            ));
        }
        migrate(&mut value, ver as u32);
    } else {
        return Err("scenario: must be a JSON object".into());
    }
    from_value(value)
}

/// A scenario from a JSON value already in the current schema (no version
/// check or migration), naming the path of a bad field.
pub fn from_value(value: serde_json::Value) -> Result<Scenario, String> {
    serde_path_to_error::deserialize(value).map_err(|e| {
        let path = e.path().to_string();
        format!(
            "{}: {}",
            if path == "." {
                "scenario".to_string()
            } else {
                path
            },
            e.inner()
        )
    })
}

/// Serialise to pretty JSON.
pub fn to_json(s: &Scenario) -> String {
    serde_json::to_string_pretty(s).unwrap_or_default()
}
