//! The thin binding between the engine and the page (compiled only for wasm32).
//! Each function converts types and delegates to the engine.

use wasm_bindgen::prelude::*;

fn to_js<T: serde::Serialize>(v: &T) -> Result<JsValue, JsValue> {
    let ser = serde_wasm_bindgen::Serializer::new().serialize_maps_as_objects(true);
    v.serialize(&ser)
        .map_err(|e| JsValue::from_str(&e.to_string()))
}

/// Engine version.
#[wasm_bindgen]
pub fn version() -> String {
    env!("CARGO_PKG_VERSION").to_string()
}

/// The default scenario as a JS object.
#[wasm_bindgen]
pub fn default_scenario() -> Result<JsValue, JsValue> {
    to_js(&crate::Scenario::default())
}

/// Analyse a scenario given as JSON text; returns the analysis object, or throws
/// a string naming the field and the reason.
#[wasm_bindgen]
pub fn analyze_json(scenario_json: &str) -> Result<JsValue, JsValue> {
    let s = crate::scenario::from_json(scenario_json).map_err(|e| JsValue::from_str(&e))?;
    let a = crate::analyze(&s).map_err(|e| JsValue::from_str(&e.to_string()))?;
    to_js(&a)
}
