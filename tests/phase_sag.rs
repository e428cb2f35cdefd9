//! A drive front end with one phase's EMF sagged to 0 to 0.2 pu, against
//! ngspice, and its continuity with 0.3 pu.
//!
//! The circuit is `tests/ngspice/scenarios/drive_reactor_full.json` (480 V
//! 60 Hz, 4 % line reactor, 4.7 mF bus, 75 kW constant power) with
//! `supply.phase_magnitude_pu = [m, 1, 1]`.  Until 2026-12-04 the engine
//! gave no answer for m = 0 to 0.2 ("too many switching events", reported
//! as an unstable DC-link filter): in the idle interval around the b-c
//! crossing, leakage kicks (`solver::Engine::kick_only`) made four devices
//! chatter.  Phase a never conducts at these magnitudes (its largest line
//! voltage, |m - 1∠-120°| x 392 V = 436 V at m = 0.2, stays below the bus),
//! so phases b and c feed the bus alone and the figures hardly move with m.

use rectifield::analysis::analyze;
use rectifield::Scenario;

fn sagged(m: f64) -> Scenario {
    let path = format!(
        "{}/tests/ngspice/scenarios/drive_reactor_full.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let mut s = rectifield::scenario::from_json(&std::fs::read_to_string(path).unwrap()).unwrap();
    s.supply.phase_magnitude_pu = [m, 1.0, 1.0];
    s
}

/// The figures the test reads: DC average, DC ripple peak-to-peak, and the
/// RMS of the three line currents; the rated current.
struct Figures {
    v_avg: f64,
    ripple_pp: f64,
    rms: [f64; 3],
    rated_a: f64,
}

fn solve(m: f64) -> Figures {
    let a = analyze(&sagged(m)).unwrap();
    let r = a.results.as_ref().unwrap_or_else(|| {
        panic!(
            "phase a at {m} pu: no simulation result; warnings {:?}",
            a.warnings
        )
    });
    Figures {
        v_avg: r.dc.v_avg_v,
        ripple_pp: r.dc.ripple_pp_v,
        rms: [
            r.line_currents[0].rms_a,
            r.line_currents[1].rms_a,
            r.line_currents[2].rms_a,
        ],
        rated_a: a.derived.rated_current_a,
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Golden values from ngspice 39 (Debian), the cross-check's netlist, device
/// models, options and reading of the results (`tests/ngspice/run`), exact
/// constant power `P / v`, 80 cycles from the DC operating point (the cycle
/// change of every figure was at most 0.11 of the cross-check's settling
/// limits; at 12 cycles, the cross-check's count for this case at 1 pu, 0.1
/// and 0.2 pu were not settled).  Remade by, for M in 0.0 0.1 0.2:
///
/// ```text
/// cargo build --release
/// tests/ngspice/figures tests/ngspice/scenarios/drive_reactor_full.json 80 \
///     'supply.phase_magnitude_pu=[M,1,1]'
/// ```
///
/// (M; DC average V; line b RMS A; line c RMS A.)  Phase a carried 6.3e-5,
/// 7.8e-5 and 9.4e-5 A RMS there (its leakage).
const NGSPICE: [(f64, f64, f64, f64); 3] = [
    (0.0, 582.482658, 201.926022, 201.925961),
    (0.1, 582.483336, 201.922891, 201.922824),
    (0.2, 582.483301, 201.923038, 201.922965),
];

/// Tolerances of the cross-check (`tests/ngspice/run`, issue #3): DC average
/// 0.3 %, line-current RMS 0.5 %.  The engine's line RMS sits about 0.49 %
/// below ngspice's here, close to the limit, and that is its constant-power
/// model, not the solver: the engine linearises the load about the mean bus
/// voltage, whose ripple here is 21 % of the mean; the same deck with the
/// engine's linearised load (`I = 2P/V0 - P v/V0^2`, V0 = 582.777 V) gave
/// 200.9548 A against the engine's 200.9361 A (0.009 %) and 582.7136 V
/// against 582.7772 V (0.011 %) at 0 pu (measured 2026-12-04).
const TOL_DC_REL: f64 = 0.3e-2;
const TOL_RMS_REL: f64 = 0.5e-2;

#[test]
fn one_phase_emf_at_zero_to_0_2_pu_matches_ngspice() {
    for (m, v_avg, rms_b, rms_c) in NGSPICE {
        let f = solve(m);
        assert!(
            rel(f.v_avg, v_avg) <= TOL_DC_REL,
            "{m} pu: DC average {} V, ngspice {v_avg} V",
            f.v_avg
        );
        for (k, want) in [(1, rms_b), (2, rms_c)] {
            assert!(
                rel(f.rms[k], want) <= TOL_RMS_REL,
                "{m} pu: line {} RMS {} A, ngspice {want} A",
                ["a", "b", "c"][k],
                f.rms[k]
            );
        }
        // Phase a carries no more than leakage, as in ngspice: the
        // cross-check's limit for an open line, 1e-4 of the rated current.
        assert!(
            f.rms[0] <= 1e-4 * f.rated_a,
            "{m} pu: line a RMS {} A",
            f.rms[0]
        );
    }
}

/// No jump between 0.2 pu (which needed the leakage-kick rule) and 0.3 pu
/// (which solves without it).  Phase a conducts at neither, so the circuit
/// that feeds the bus is the same and the figures may differ only at the
/// leakage level: ngspice's moved by at most 6e-6 relative between 0 and
/// 0.3 pu (DC 582.48266 and 582.48292 V, line b 201.92602 and 201.92485 A,
/// the latter from the same command with M = 0.3).  The bounds below are a thousandth of the cross-check's
/// tolerances (ripple: its 3 %, a bound of 3e-5); the engine's differences
/// were 2e-8 (DC), 7e-8 (RMS) and 5e-6 (ripple peak-to-peak) relative.
#[test]
fn figures_are_continuous_from_0_2_to_0_3_pu() {
    let (a, b) = (solve(0.2), solve(0.3));
    assert!(
        rel(a.v_avg, b.v_avg) <= 1e-3 * TOL_DC_REL,
        "DC {} {}",
        a.v_avg,
        b.v_avg
    );
    assert!(
        rel(a.ripple_pp, b.ripple_pp) <= 3e-5,
        "ripple {} {}",
        a.ripple_pp,
        b.ripple_pp
    );
    for k in 1..3 {
        assert!(
            rel(a.rms[k], b.rms[k]) <= 1e-3 * TOL_RMS_REL,
            "line {k} RMS {} {}",
            a.rms[k],
            b.rms[k]
        );
    }
}
