//! The scenario format: field paths in errors, versions, and the documented examples.

use rectifield::scenario::{from_json, to_json, Scenario, SCHEMA_VERSION};

#[test]
fn empty_object_is_the_default_scenario() {
    // One difference, documented in docs/scenario-format.md: a file without
    // an `analysis` section takes its rating from the load (0), which for
    // the default drive's 45 kW load is the default scenario's 45 kW rating.
    let parsed = from_json("{}").unwrap();
    let mut default = Scenario::default();
    assert_eq!(default.analysis.rated_power_w, 45e3);
    assert_eq!(parsed.analysis.rated_power_w, 0.0);
    assert_eq!(
        rectifield::params::derive(&parsed).unwrap(),
        rectifield::params::derive(&default).unwrap()
    );
    default.analysis.rated_power_w = 0.0;
    assert_eq!(parsed, default);
}

#[test]
fn unknown_field_is_rejected_with_its_path() {
    let e = from_json(r#"{"supply": {"v_ll_rms_v": 400, "voltage": 1}}"#).unwrap_err();
    assert!(e.contains("supply") && e.contains("voltage"), "{e}");
    let e = from_json(r#"{"dc": {"load": {"kind": "resistor", "r_ohm": 5, "x": 1}}}"#).unwrap_err();
    assert!(e.starts_with("dc.load"), "{e}");
}

#[test]
fn wrong_type_is_rejected_with_its_path() {
    let e = from_json(r#"{"bridge": {"alpha_deg": "thirty"}}"#).unwrap_err();
    assert!(e.starts_with("bridge.alpha_deg"), "{e}");
    let e = from_json(r#"{"supply": {"phase_open": [false, "no", false]}}"#).unwrap_err();
    assert!(e.starts_with("supply.phase_open"), "{e}");
    assert!(from_json("[1, 2]").unwrap_err().starts_with("scenario"));
    assert!(from_json("{\"name\": ")
        .unwrap_err()
        .contains("not valid JSON"));
}

#[test]
fn versions_are_checked_and_version_1_is_migrated() {
    let e = from_json(&format!("{{\"schema_version\": {}}}", SCHEMA_VERSION + 1)).unwrap_err();
    assert!(e.starts_with("schema_version"), "{e}");
    assert!(from_json("{\"schema_version\": 0}").is_err());
    // A version-1 file: no compliance or capacitor-thermal fields; keeps its 720-point grid.
    let v1 = r#"{"schema_version": 1, "name": "old case", "supply": {"v_ll_rms_v": 415}}"#;
    let s = from_json(v1).unwrap();
    assert_eq!(s.schema_version, SCHEMA_VERSION);
    assert_eq!(s.analysis.grid_points, 720);
    assert_eq!(s.supply.v_ll_rms_v, 415.0);
    // The current version keeps the current default grid.
    assert_eq!(from_json("{}").unwrap().analysis.grid_points, 1024);
}

#[test]
fn every_example_round_trips_and_matches_the_documented_copy() {
    // docs/examples/ holds the built-in examples as written by
    // `rectifield examples docs/examples` (remake them with that command).
    for (stem, s) in rectifield::examples::all() {
        let text = to_json(&s);
        assert_eq!(from_json(&text).unwrap(), s, "{stem}");
        let path = format!("{}/docs/examples/{stem}.json", env!("CARGO_MANIFEST_DIR"));
        let doc = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
        assert_eq!(
            from_json(&doc).unwrap(),
            s,
            "{path} is stale: remake with `rectifield examples docs/examples`"
        );
    }
}

#[test]
fn every_bridge_type_has_an_example() {
    use rectifield::scenario::BridgeKind::*;
    let kinds: Vec<_> = rectifield::examples::all()
        .iter()
        .map(|(_, s)| s.bridge.kind)
        .collect();
    for k in [
        SixPulseDiode,
        SixPulseThyristor,
        ThreePulseDiode,
        ThreePulseThyristor,
        TwelvePulseSeries,
        TwelvePulseParallel,
    ] {
        assert!(kinds.contains(&k), "{k:?}");
    }
}
