//! The thin binding between the engine and the page (compiled only for wasm32).
//! Each function converts types and delegates to the engine.  Bulk arrays (the
//! waveforms) cross once, as one Float64Array.

use std::cell::RefCell;
use wasm_bindgen::prelude::*;

/// Time grid and the samples of every signal.
type Waves = (Vec<f64>, Vec<Vec<f64>>);

thread_local! {
    /// Waveforms of the last analysis: (time grid, signal samples), kept so the
    /// page can fetch them as one typed array without re-solving.
    static LAST: RefCell<Option<Waves>> = const { RefCell::new(None) };
    /// Message of the last panic, if any (the page shows it).
    static PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

fn to_js<T: serde::Serialize>(v: &T) -> Result<JsValue, JsValue> {
    let ser = serde_wasm_bindgen::Serializer::new().serialize_maps_as_objects(true);
    v.serialize(&ser)
        .map_err(|e| JsValue::from_str(&e.to_string()))
}

/// Install a panic hook that records the message (call once at start).
#[wasm_bindgen]
pub fn install_panic_hook() {
    std::panic::set_hook(Box::new(|info| {
        let msg = info.to_string();
        PANIC.with(|p| *p.borrow_mut() = Some(msg.clone()));
        web_sys::console::error_1(&JsValue::from_str(&format!(
            "rectifield engine panic: {msg}"
        )));
    }));
}

/// The message of the last engine panic, or undefined.
#[wasm_bindgen]
pub fn last_panic() -> Option<String> {
    PANIC.with(|p| p.borrow().clone())
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

/// The built-in examples: an array of `{ id, scenario }`.
#[wasm_bindgen]
pub fn examples() -> Result<JsValue, JsValue> {
    #[derive(serde::Serialize)]
    struct Ex {
        id: &'static str,
        scenario: crate::Scenario,
    }
    let v: Vec<Ex> = crate::examples::all()
        .into_iter()
        .map(|(id, scenario)| Ex { id, scenario })
        .collect();
    to_js(&v)
}

/// Parse and validate a scenario (JSON text) without solving; returns the
/// normalised scenario (defaults filled, older versions migrated) or throws
/// "field.path: reason".
#[wasm_bindgen]
pub fn parse_scenario(scenario_json: &str) -> Result<JsValue, JsValue> {
    let s = crate::scenario::from_json(scenario_json).map_err(|e| JsValue::from_str(&e))?;
    to_js(&s)
}

/// Analyse a scenario given as JSON text.  Returns the analysis object with
/// every signal's `samples` left empty; fetch them with [`waveforms`].
/// Throws a string "field.path: reason" on bad input.
#[wasm_bindgen]
pub fn analyze_json(scenario_json: &str) -> Result<JsValue, JsValue> {
    let s = crate::scenario::from_json(scenario_json).map_err(|e| JsValue::from_str(&e))?;
    let mut a = crate::analyze(&s).map_err(|e| JsValue::from_str(&e.to_string()))?;
    let keep = a.sim.as_mut().map(|sim| {
        let t = std::mem::take(&mut sim.t_s);
        let sig: Vec<Vec<f64>> = sim
            .signals
            .iter_mut()
            .map(|x| std::mem::take(&mut x.samples))
            .collect();
        (t, sig)
    });
    LAST.with(|l| *l.borrow_mut() = keep);
    to_js(&a)
}

/// Waveforms of the last analysis as one Float64Array: the time grid (s)
/// first, then each signal in the order of `analysis.sim.signals`, each the
/// length of the grid.  Empty when the last analysis had no simulation.
#[wasm_bindgen]
pub fn waveforms() -> js_sys::Float64Array {
    LAST.with(|l| {
        let l = l.borrow();
        match l.as_ref() {
            Some((t, sig)) => {
                let mut flat = Vec::with_capacity(t.len() * (sig.len() + 1));
                flat.extend_from_slice(t);
                for s in sig {
                    flat.extend_from_slice(s);
                }
                js_sys::Float64Array::from(flat.as_slice())
            }
            None => js_sys::Float64Array::new_with_length(0),
        }
    })
}

/// The power-up transient of the last analysis is inside `analysis.sim.transient`
/// (small arrays); this returns one sweep point: the scenario with the numeric
/// field at `path` set to `x`, analysed and summarised.
#[wasm_bindgen]
pub fn sweep_point(scenario_json: &str, path: &str, x: f64) -> Result<JsValue, JsValue> {
    let s = crate::scenario::from_json(scenario_json).map_err(|e| JsValue::from_str(&e))?;
    to_js(&crate::sweep::point(&s, path, x))
}

/// A run of sweep points over one field (`crate::sweep::Sweeper`): each
/// point starts from the previous solved one, so a run costs less than the
/// same points through `sweep_point`.  Call `free()` when done.
#[wasm_bindgen]
pub struct SweepRun(crate::sweep::Sweeper);

#[wasm_bindgen]
impl SweepRun {
    /// A run over the numeric field at `path` of the scenario (JSON text);
    /// an error names a bad scenario or path.
    #[wasm_bindgen(constructor)]
    pub fn new(scenario_json: &str, path: &str) -> Result<SweepRun, JsValue> {
        let s = crate::scenario::from_json(scenario_json).map_err(|e| JsValue::from_str(&e))?;
        crate::sweep::Sweeper::new(&s, path)
            .map(SweepRun)
            .map_err(|e| JsValue::from_str(&e))
    }

    /// The point with the field set to `x` (a `SweepPoint` object).
    pub fn point(&mut self, x: f64) -> Result<JsValue, JsValue> {
        to_js(&self.0.point(x))
    }
}

/// Names of the summary fields (for sweep plots and CSV).
#[wasm_bindgen]
pub fn summary_fields() -> Result<JsValue, JsValue> {
    to_js(&crate::sweep::SUMMARY_FIELDS.to_vec())
}

/// The field check: a `FieldInput` as JSON text in, the `FieldReport` object
/// out (expected bus, fault signatures ranked against the readings, the
/// safety panel).  Throws "field.path: reason" on bad input.
#[wasm_bindgen]
pub fn field_json(input_json: &str) -> Result<JsValue, JsValue> {
    let inp = crate::field::from_json(input_json).map_err(|e| JsValue::from_str(&e.to_string()))?;
    let r = crate::field::check(&inp).map_err(|e| JsValue::from_str(&e.to_string()))?;
    to_js(&r)
}

/// An example field-check input (for the page's first view).
#[wasm_bindgen]
pub fn field_example() -> Result<JsValue, JsValue> {
    to_js(&crate::field::FieldInput::default())
}
