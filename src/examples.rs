//! Built-in example scenarios.  These are demonstration cases of our own
//! (invented values, chosen to be typical of their kind), not reference data.

use crate::scenario::*;

/// (file stem, scenario) for every built-in example.
pub fn all() -> Vec<(&'static str, Scenario)> {
    vec![
        ("pumping_station_drive", pumping_station_drive()),
        ("plating_rectifier", plating_rectifier()),
        ("twelve_pulse_supply", twelve_pulse_supply()),
        ("battery_charger", battery_charger()),
        ("three_pulse_heater", three_pulse_heater()),
        ("workshop_drive_no_reactor", workshop_drive_no_reactor()),
        (
            "electrolysis_twelve_pulse_parallel",
            electrolysis_twelve_pulse_parallel(),
        ),
        (
            "lab_supply_three_pulse_thyristor",
            lab_supply_three_pulse_thyristor(),
        ),
    ]
}

/// A 75 kW pump drive on 480 V 60 Hz behind a 1500 kVA transformer, with a 3 % line reactor.
pub fn pumping_station_drive() -> Scenario {
    Scenario {
        name: "Pumping-station drive, 480 V 60 Hz, 3 % reactor".into(),
        notes: "Demo case: six-pulse diode front end of a 75 kW variable-speed pump drive.".into(),
        supply: Supply {
            v_ll_rms_v: 480.0,
            f_hz: 60.0,
            ..Supply::default()
        },
        source: Source {
            impedance: SourceImpedance::Transformer {
                s_kva: 1500.0,
                z_pct: 5.75,
                x_over_r: 7.0,
            },
            reactor: LineReactor::Percent {
                z_pct: 3.0,
                x_over_r: 30.0,
            },
        },
        bridge: Bridge {
            kind: BridgeKind::SixPulseDiode,
            v_threshold_v: 0.85,
            r_slope_ohm: 2.5e-3,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 4.7e-3,
            cap_esr_ohm: 0.015,
            load: DcLoad::ConstantPower { p_w: 75e3 },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 75e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// An electroplating rectifier with thyristors on 400 V 50 Hz feeding a bath through a smoothing choke.
pub fn plating_rectifier() -> Scenario {
    Scenario {
        name: "Electroplating rectifier, thyristor bridge, 400 V 50 Hz".into(),
        notes: "Demo case: phase-controlled bridge at 40 degrees into a plating bath (R-L-E)."
            .into(),
        supply: Supply::default(),
        source: Source {
            impedance: SourceImpedance::Transformer {
                s_kva: 250.0,
                z_pct: 6.0,
                x_over_r: 5.0,
            },
            reactor: LineReactor::None,
        },
        bridge: Bridge {
            kind: BridgeKind::SixPulseThyristor,
            alpha_deg: 40.0,
            v_threshold_v: 1.0,
            r_slope_ohm: 1.5e-3,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 0.0,
            load: DcLoad::Rle {
                r_ohm: 1.6,
                l_h: 8e-3,
                e_v: 60.0,
            },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 120e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A 12-pulse series supply on 690 V 50 Hz secondaries for a large DC load.
pub fn twelve_pulse_supply() -> Scenario {
    Scenario {
        name: "Twelve-pulse supply, series bridges, 690 V 50 Hz".into(),
        notes: "Demo case: two diode bridges on star and delta secondaries feeding a DC load through a choke.".into(),
        supply: Supply {
            v_ll_rms_v: 690.0,
            f_hz: 50.0,
            ..Supply::default()
        },
        source: Source {
            impedance: SourceImpedance::ShortCircuitMva {
                s_sc_mva: 40.0,
                x_over_r: 10.0,
            },
            reactor: LineReactor::Percent {
                z_pct: 4.0,
                x_over_r: 25.0,
            },
        },
        bridge: Bridge {
            kind: BridgeKind::TwelvePulseSeries,
            ..Bridge::default()
        },
        dc: DcSide {
            choke_l_h: 5e-3,
            choke_r_ohm: 5e-3,
            cap_f: 0.0,
            load: DcLoad::Resistor { r_ohm: 4.5 },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 780e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A thyristor battery charger on 415 V 50 Hz charging a 220 V lead-acid string.
pub fn battery_charger() -> Scenario {
    Scenario {
        name: "Battery charger, thyristor bridge, 415 V 50 Hz".into(),
        notes:
            "Demo case: a substation battery charger; the battery is the back-EMF behind the choke."
                .into(),
        supply: Supply {
            v_ll_rms_v: 415.0,
            f_hz: 50.0,
            ..Supply::default()
        },
        source: Source {
            impedance: SourceImpedance::ShortCircuitKa {
                i_sc_ka: 12.0,
                x_over_r: 4.0,
            },
            reactor: LineReactor::None,
        },
        bridge: Bridge {
            kind: BridgeKind::SixPulseThyristor,
            alpha_deg: 62.0,
            v_threshold_v: 1.1,
            r_slope_ohm: 4e-3,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 0.0,
            load: DcLoad::Rle {
                r_ohm: 0.12,
                l_h: 25e-3,
                e_v: 245.0,
            },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 25e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A three-pulse diode rectifier on 400 V 50 Hz feeding a resistive heater.
pub fn three_pulse_heater() -> Scenario {
    Scenario {
        name: "Three-pulse rectifier, resistive heater, 400 V 50 Hz".into(),
        notes:
            "Demo case: star-point (midpoint) diode rectifier; the neutral carries the DC return."
                .into(),
        supply: Supply::default(),
        source: Source {
            impedance: SourceImpedance::ShortCircuitMva {
                s_sc_mva: 5.0,
                x_over_r: 4.0,
            },
            reactor: LineReactor::None,
        },
        bridge: Bridge {
            kind: BridgeKind::ThreePulseDiode,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 0.0,
            load: DcLoad::Rle {
                r_ohm: 6.0,
                l_h: 30e-3,
                e_v: 0.0,
            },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 12e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A 30 kW workshop drive on 400 V 50 Hz with no reactor or choke (a harmonic problem case).
pub fn workshop_drive_no_reactor() -> Scenario {
    Scenario {
        name: "Workshop drive without reactor, 400 V 50 Hz".into(),
        notes: "Demo case: a small drive on a stiff feed with neither line reactor nor DC choke. The bus is a bank of four cans (0.35 K/W for the bank); the ripple current without a reactor takes it close to its rated temperature."
            .into(),
        source: Source {
            impedance: SourceImpedance::Transformer {
                s_kva: 630.0,
                z_pct: 4.5,
                x_over_r: 6.0,
            },
            reactor: LineReactor::None,
        },
        dc: DcSide {
            cap_f: 1.5e-3,
            cap_esr_ohm: 0.03,
            cap_rth_k_per_w: 0.35,
            load: DcLoad::ConstantPower { p_w: 30e3 },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 30e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A 12-pulse parallel supply (interphase reactor) for an electrolysis cell line on 400 V 50 Hz secondaries.
pub fn electrolysis_twelve_pulse_parallel() -> Scenario {
    Scenario {
        name: "Electrolysis supply, twelve-pulse parallel, 400 V 50 Hz".into(),
        notes: "Demo case: two diode bridges in parallel through an interphase reactor into a cell line (R-L-E).".into(),
        source: Source {
            impedance: SourceImpedance::ShortCircuitMva {
                s_sc_mva: 25.0,
                x_over_r: 8.0,
            },
            reactor: LineReactor::Percent {
                z_pct: 5.0,
                x_over_r: 25.0,
            },
        },
        bridge: Bridge {
            kind: BridgeKind::TwelvePulseParallel,
            interphase_l_h: 4e-3,
            v_threshold_v: 0.9,
            r_slope_ohm: 0.8e-3,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 0.0,
            load: DcLoad::Rle {
                r_ohm: 0.35,
                l_h: 3e-3,
                e_v: 380.0,
            },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 180e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}

/// A small three-pulse thyristor supply on 230/400 V 50 Hz for a laboratory DC motor.
pub fn lab_supply_three_pulse_thyristor() -> Scenario {
    Scenario {
        name: "Laboratory DC supply, three-pulse thyristor, 400 V 50 Hz".into(),
        notes:
            "Demo case: midpoint thyristor rectifier at 50 degrees into a motor armature (R-L-E)."
                .into(),
        source: Source {
            impedance: SourceImpedance::Transformer {
                s_kva: 30.0,
                z_pct: 4.0,
                x_over_r: 3.0,
            },
            reactor: LineReactor::None,
        },
        bridge: Bridge {
            kind: BridgeKind::ThreePulseThyristor,
            alpha_deg: 50.0,
            v_threshold_v: 1.2,
            r_slope_ohm: 12e-3,
            ..Bridge::default()
        },
        dc: DcSide {
            cap_f: 0.0,
            load: DcLoad::Rle {
                r_ohm: 1.8,
                l_h: 40e-3,
                e_v: 90.0,
            },
            ..DcSide::default()
        },
        analysis: AnalysisSettings {
            rated_power_w: 5e3,
            ..AnalysisSettings::default()
        },
        ..Scenario::default()
    }
}
