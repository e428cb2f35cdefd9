//! The engine called through the JavaScript binding (`src/wasm.rs`), in a real
//! JavaScript engine.  `./build.sh test` runs this file twice: in Node and in
//! headless Chromium (`WASM_BINDGEN_USE_BROWSER=1`).
//!
//! Expected values are closed forms from outside the project:
//! N. Mohan, T. M. Undeland, W. P. Robbins, *Power Electronics: Converters,
//! Applications and Design*, 3rd ed., Wiley 2003, ch. 5, three-phase full
//! bridge: ideal no-load DC voltage `Vdo = (3 sqrt2 / pi) V_LL = 1.3505 V_LL`;
//! ideal line current THD with a ripple-free DC current `sqrt(pi^2/9 - 1) = 31.08 %`;
//! six-pulse harmonics only at `h = 6k +- 1`, with `I_h = I_1 / h`.
#![cfg(target_arch = "wasm32")]

use js_sys::{Array, Reflect};
use rectifield::wasm::{analyze_json, default_scenario, sweep_point, version, SweepRun};
use std::f64::consts::{PI, SQRT_2};
use wasm_bindgen::{JsCast, JsValue};
use wasm_bindgen_test::*;

fn get(obj: &JsValue, path: &str) -> JsValue {
    let mut cur = obj.clone();
    for key in path.split('.') {
        cur = Reflect::get(&cur, &JsValue::from_str(key))
            .unwrap_or_else(|_| panic!("cannot read {path} at {key}"));
        assert!(!cur.is_undefined(), "{path}: missing at {key}");
    }
    cur
}

fn num(obj: &JsValue, path: &str) -> f64 {
    get(obj, path)
        .as_f64()
        .unwrap_or_else(|| panic!("{path} is not a number"))
}

fn close(got: f64, want: f64, rel: f64) -> bool {
    (got - want).abs() <= rel * want.abs()
}

#[wasm_bindgen_test]
fn version_is_the_crate_version() {
    assert_eq!(version(), env!("CARGO_PKG_VERSION"));
}

#[wasm_bindgen_test]
fn empty_scenario_gives_textbook_vdo_for_400_v() {
    let a = analyze_json("{}").expect("{} is a valid scenario");
    let vdo = num(&a, "textbook.vdo_v");
    let want = 3.0 * SQRT_2 / PI * 400.0; // 540.19 V
    assert!(close(vdo, want, 1e-9), "vdo_v = {vdo}, want {want}");
    assert!(close(want / 400.0, 1.3505, 1e-4));
}

#[wasm_bindgen_test]
fn vdo_scales_with_the_line_voltage_passed_as_json() {
    let a = analyze_json(r#"{"supply": {"v_ll_rms_v": 480, "f_hz": 60}}"#).expect("valid");
    let vdo = num(&a, "textbook.vdo_v");
    assert!(close(vdo, 3.0 * SQRT_2 / PI * 480.0, 1e-9), "vdo_v = {vdo}");
    assert!(close(
        num(&a, "derived.omega_rad_s"),
        2.0 * PI * 60.0,
        1e-12
    ));
}

#[wasm_bindgen_test]
fn six_pulse_harmonics_follow_the_one_over_h_rule() {
    let a = analyze_json("{}").expect("valid");
    let thd = num(&a, "textbook.thd_pct");
    let want_thd = 100.0 * (PI * PI / 9.0 - 1.0).sqrt();
    assert!(
        close(thd, want_thd, 1e-6),
        "thd_pct = {thd}, want {want_thd}"
    );
    let list: Array = get(&a, "textbook.harmonics").dyn_into().expect("array");
    assert!(list.length() >= 2, "harmonic table is empty");
    for item in list.iter() {
        let h = num(&item, "order");
        let r = h % 6.0;
        assert!(r == 1.0 || r == 5.0, "order {h} is not 6k +- 1");
        let pct = num(&item, "pct_of_fundamental");
        assert!(close(pct, 100.0 / h, 1e-6), "h{h}: {pct} %");
    }
}

#[wasm_bindgen_test]
fn default_scenario_round_trips_through_json() {
    let s = default_scenario().expect("default scenario");
    let text: String = js_sys::JSON::stringify(&s).expect("stringify").into();
    let a = analyze_json(&text).expect("the default scenario is valid");
    let b = analyze_json("{}").expect("valid");
    assert_eq!(num(&a, "textbook.vd_v"), num(&b, "textbook.vd_v"));
}

#[wasm_bindgen_test]
fn bad_input_throws_a_message_naming_the_field() {
    let err = analyze_json(r#"{"supply": {"v_ll_rms_v": "four hundred"}}"#)
        .expect_err("a string voltage must be refused");
    let msg = err.as_string().expect("the error is a string");
    assert!(msg.starts_with("supply.v_ll_rms_v"), "message: {msg}");

    let err = analyze_json(r#"{"bridge": {"kind": "nine_pulse"}}"#).expect_err("unknown kind");
    let msg = err.as_string().expect("string");
    assert!(msg.contains("bridge.kind"), "message: {msg}");

    let err = analyze_json(r#"{"supply": {"v_ll_rms_v": -5}}"#).expect_err("negative voltage");
    let msg = err.as_string().expect("string");
    assert!(msg.starts_with("supply.v_ll_rms_v"), "message: {msg}");

    let err = analyze_json("not json").expect_err("not JSON");
    assert!(err.as_string().unwrap_or_default().contains("JSON"));
}

#[wasm_bindgen_test]
fn a_sweep_run_gives_the_figures_of_independent_points() {
    // The default scenario's supply voltage varied: a run (each point from
    // the previous solved one) against the same points solved on their own.
    // Both are the same periodic solution; 1e-6 is far above the Newton
    // tolerance (see tests/sweep_warm.rs).  Expected DC mean: near the ideal
    // Vdo = 1.3505 V_LL (Mohan, Undeland and Robbins, 3rd ed., ch. 5) less the
    // load's drops, so between 1.2 and 1.45 V_LL.
    let mut run = SweepRun::new("{}", "supply.v_ll_rms_v").expect("a numeric field");
    for v in [380.0, 400.0, 420.0] {
        let a = run.point(v).expect("point");
        let b = sweep_point("{}", "supply.v_ll_rms_v", v).expect("point");
        let (va, vb) = (num(&a, "summary.v_dc_avg_v"), num(&b, "summary.v_dc_avg_v"));
        assert!(close(va, vb, 1e-6), "{v} V: run {va}, independent {vb}");
        let (ia, ib) = (
            num(&a, "summary.i_line_rms_a"),
            num(&b, "summary.i_line_rms_a"),
        );
        assert!(close(ia, ib, 1e-6), "{v} V: run {ia}, independent {ib}");
        assert!(va > 1.2 * v && va < 1.45 * v, "{v} V gives {va} V DC");
    }
    let err = SweepRun::new("{}", "supply.no_such_field")
        .err()
        .expect("an unknown field is refused");
    assert!(err
        .as_string()
        .unwrap_or_default()
        .contains("no_such_field"));
}
