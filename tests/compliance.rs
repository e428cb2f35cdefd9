//! Grid compliance: the limit tables, the row conventions, the even-harmonic
//! and pulse-number rules, worked cases computed by hand, the PCC voltage
//! against the simulated PCC voltage, several converters, and the "what would
//! pass" search on a real scenario.
//!
//! The table values checked here are the ones typed in `src/compliance.rs`
//! (from memory of IEEE Std 519-2014 and IEC 61000-3-12 Ed. 2.0): these tests
//! guard against typing slips and logic errors, not against a wrong memory.

use rectifield::compliance::*;
use rectifield::params::derive;
use rectifield::scenario::{
    from_json, BridgeKind, DcLoad, LineReactor, Scenario, SourceImpedance, VoltageHarmonic,
};

fn close(a: f64, b: f64, tol: f64) -> bool {
    (a - b).abs() <= tol
}

fn by_name<'a>(c: &'a [Check], name: &str) -> &'a Check {
    c.iter().find(|k| k.name == name).unwrap()
}

// ------------------------------------------------------------- tables

#[test]
fn ieee519_table_entries() {
    // Table 2, several entries: row, range, TDD.
    let t2 = &IEEE519_TABLE2;
    assert_eq!(t2.rows[0].odd_pct, [4.0, 2.0, 1.5, 0.6, 0.3]);
    assert_eq!(t2.rows[0].tdd_pct, 5.0);
    assert_eq!(t2.rows[1].odd_pct[0], 7.0);
    assert_eq!(t2.rows[1].tdd_pct, 8.0);
    assert_eq!(t2.rows[2].odd_pct[2], 4.0);
    assert_eq!(t2.rows[3].odd_pct, [12.0, 5.5, 5.0, 2.0, 1.0]);
    assert_eq!(t2.rows[3].tdd_pct, 15.0);
    assert_eq!(t2.rows[4].odd_pct[4], 1.4);
    assert_eq!(t2.rows[4].tdd_pct, 20.0);
    // Table 3 is half of Table 2 throughout (the 2014 edition's pattern).
    for (a, b) in IEEE519_TABLE2.rows.iter().zip(IEEE519_TABLE3.rows) {
        assert_eq!(a.from, b.from);
        for j in 0..5 {
            assert!(close(a.odd_pct[j] / 2.0, b.odd_pct[j], 1e-12));
        }
        assert!(close(a.tdd_pct / 2.0, b.tdd_pct, 1e-12));
    }
    // Table 4: its own rows < 25, 25 < 50, >= 50.
    let t4 = &IEEE519_TABLE4;
    assert_eq!(t4.rows.len(), 3);
    assert_eq!(t4.rows[1].from, 25.0);
    assert_eq!(t4.rows[0].odd_pct, [1.0, 0.5, 0.38, 0.15, 0.1]);
    assert_eq!(t4.rows[2].odd_pct[2], 1.15);
    assert_eq!(t4.rows[2].tdd_pct, 3.75);
    // Which table by bus voltage (69 kV and 161 kV belong to the lower table).
    assert_eq!(ieee519_current_table(480.0).name, IEEE519_TABLE2.name);
    assert_eq!(ieee519_current_table(69.0e3).name, IEEE519_TABLE2.name);
    assert_eq!(ieee519_current_table(69.1e3).name, IEEE519_TABLE3.name);
    assert_eq!(ieee519_current_table(161.0e3).name, IEEE519_TABLE3.name);
    assert_eq!(ieee519_current_table(230.0e3).name, IEEE519_TABLE4.name);
}

#[test]
fn ieee519_table1_voltage_limits() {
    assert_eq!(ieee519_voltage_limits(480.0).0, 5.0);
    assert_eq!(ieee519_voltage_limits(480.0).1, 8.0);
    // 1.0 kV exactly is in the "V <= 1.0 kV" row.
    assert_eq!(ieee519_voltage_limits(1000.0).1, 8.0);
    assert_eq!(ieee519_voltage_limits(13.8e3).0, 3.0);
    assert_eq!(ieee519_voltage_limits(13.8e3).1, 5.0);
    assert_eq!(ieee519_voltage_limits(69.0e3).1, 5.0);
    assert_eq!(ieee519_voltage_limits(138.0e3).0, 1.5);
    assert_eq!(ieee519_voltage_limits(138.0e3).1, 2.5);
    assert_eq!(ieee519_voltage_limits(345.0e3).0, 1.0);
    assert_eq!(ieee519_voltage_limits(345.0e3).1, 1.5);
}

#[test]
fn ieee519_row_boundaries_include_the_lower_bound() {
    let t = &IEEE519_TABLE2;
    assert_eq!(ieee519_row(t, 19.999).label, "Isc/IL < 20");
    assert_eq!(ieee519_row(t, 20.0).label, "20 <= Isc/IL < 50");
    assert_eq!(ieee519_row(t, 49.999).label, "20 <= Isc/IL < 50");
    assert_eq!(ieee519_row(t, 50.0).label, "50 <= Isc/IL < 100");
    assert_eq!(ieee519_row(t, 100.0).label, "100 <= Isc/IL < 1000");
    assert_eq!(ieee519_row(t, 999.9).label, "100 <= Isc/IL < 1000");
    assert_eq!(ieee519_row(t, 1000.0).label, "Isc/IL >= 1000");
    assert_eq!(ieee519_row(t, f64::INFINITY).label, "Isc/IL >= 1000");
    let t4 = &IEEE519_TABLE4;
    assert_eq!(ieee519_row(t4, 24.9).label, "Isc/IL < 25");
    assert_eq!(ieee519_row(t4, 25.0).label, "25 <= Isc/IL < 50");
    assert_eq!(ieee519_row(t4, 50.0).label, "Isc/IL >= 50");
}

#[test]
fn ieee519_ranges_and_even_harmonics_at_25_pct() {
    // Ranges: 3 <= h < 11, 11 <= h < 17, 17 <= h < 23, 23 <= h < 35, 35 <= h <= 50.
    for (h, r) in [
        (2, 0),
        (3, 0),
        (10, 0),
        (11, 1),
        (16, 1),
        (17, 2),
        (22, 2),
        (23, 3),
        (34, 3),
        (35, 4),
        (50, 4),
    ] {
        assert_eq!(ieee519_range(h), r, "h{h}");
    }
    // Row 20 <= Isc/IL < 50 of Table 2: odd 7, 3.5, 2.5, 1.0, 0.5.
    let r = ieee519_row(&IEEE519_TABLE2, 30.0);
    assert_eq!(ieee519_limit(r, 5, None), 7.0);
    assert_eq!(ieee519_limit(r, 2, None), 1.75); // 25 % of 7
    assert_eq!(ieee519_limit(r, 10, None), 1.75);
    assert_eq!(ieee519_limit(r, 12, None), 0.875); // 25 % of 3.5
    assert_eq!(ieee519_limit(r, 22, None), 0.625); // 25 % of 2.5
    assert_eq!(ieee519_limit(r, 24, None), 0.25); // 25 % of 1.0
    assert_eq!(ieee519_limit(r, 50, None), 0.125); // 25 % of 0.5
}

#[test]
fn ieee519_pulse_allowance_sqrt_q_over_6() {
    let orders: Vec<u32> = (2..=50).filter(|&h| is_characteristic(h, 12)).collect();
    assert_eq!(orders, vec![11, 13, 23, 25, 35, 37, 47, 49]);
    let r = ieee519_row(&IEEE519_TABLE2, 500.0); // 12, 5.5, 5.0, 2.0, 1.0
    let m = Some((12, 2f64.sqrt()));
    assert!(close(ieee519_limit(r, 11, m), 5.5 * 2f64.sqrt(), 1e-12)); // 7.778
    assert!(close(ieee519_limit(r, 23, m), 2.0 * 2f64.sqrt(), 1e-12));
    assert!(close(ieee519_limit(r, 49, m), 1.0 * 2f64.sqrt(), 1e-12));
    // Non-characteristic orders keep their limits.
    assert_eq!(ieee519_limit(r, 5, m), 12.0);
    assert_eq!(ieee519_limit(r, 17, m), 5.0);
    assert_eq!(ieee519_limit(r, 12, m), 5.5 * 0.25);

    // Through the checks: a 12-pulse spectrum (I_L = 100 A, Isc/IL = 500)
    // with I11 = 7 A: 7 % > 5.5 % but < 7.778 %, so it passes only with the
    // allowance, which holds while the non-characteristic 5th (2 A = 2 %) is
    // within 25 % of its limit (0.25 x 12 = 3 %).
    let mut s = vec![0.0; 51];
    s[1] = 100.0;
    s[11] = 7.0;
    s[5] = 2.0;
    let sp = vec![s.clone(), s.clone(), s.clone()];
    let (c, _, a) = ieee519_current_checks(&sp, 50_000.0, 100.0, 480.0, 12, 1);
    let a = a.unwrap();
    assert!(a.condition_met && a.applied);
    assert!(a.blocking_orders.is_empty());
    assert!(close(a.multiplier, 2f64.sqrt(), 1e-12));
    assert!(by_name(&c, "h11").pass);
    // A 5th of 3.5 % (above 3 %) loses the allowance: the 11th then fails.
    s[5] = 3.5;
    let sp = vec![s.clone(), s.clone(), s];
    let (c, _, a) = ieee519_current_checks(&sp, 50_000.0, 100.0, 480.0, 12, 1);
    let a = a.unwrap();
    assert!(!a.applied);
    // The 5th is the order that blocks it; the 11th (characteristic, 7 %)
    // is not counted whatever its value.
    assert_eq!(a.blocking_orders, vec![5]);
    assert!(!by_name(&c, "h11").pass);
    assert_eq!(by_name(&c, "h11").limit, 5.5);
    // Add a 2nd of 1 %: its limit is 25 % of 12 = 3 % (even rule), a quarter
    // of that 0.75 %, so it blocks too; the list is ascending.
    let mut s2 = sp[0].clone();
    s2[2] = 1.0;
    let (_, _, a) =
        ieee519_current_checks(&[s2.clone(), s2.clone(), s2], 50_000.0, 100.0, 480.0, 12, 1);
    assert_eq!(a.unwrap().blocking_orders, vec![2, 5]);
    // Six-pulse: no allowance at all.
    let (_, _, a) = ieee519_current_checks(&[vec![0.0; 51]], 5e4, 100.0, 480.0, 6, 1);
    assert!(a.is_none());
}

// ------------------------------------------------------------- worked IEEE case

/// Worked by hand.
///
/// PCC at 480 V, Isc = 3000 A, IL = 100 A: Isc/IL = 30, so Table 2 row
/// "20 <= Isc/IL < 50": odd limits 7 (h < 11), 3.5 (11..16), 2.5, 1.0, 0.5; TDD 8.
///
/// Spectrum (A RMS), phases a and c: I1 95, I2 0.5, I5 6.0, I7 3.0, I11 3.8,
/// I13 2.0; phase b the same but I5 = 6.5.  In percent of IL (100 A) the
/// values equal the amperes.
///
/// | h  | worst | value | limit | margin | verdict |
/// | 2  | a     | 0.5   | 1.75 (25 % of 7) | +1.25 | pass |
/// | 5  | b     | 6.5   | 7     | +0.5   | pass |
/// | 7  | a     | 3.0   | 7     | +4.0   | pass |
/// | 11 | a     | 3.8   | 3.5   | -0.3   | fail |
/// | 13 | a     | 2.0   | 3.5   | +1.5   | pass |
///
/// TDD: phase a sqrt(0.25 + 36 + 9 + 14.44 + 4) = sqrt(63.69) = 7.98060 %;
/// phase b sqrt(0.25 + 42.25 + 9 + 14.44 + 4) = sqrt(69.94) = 8.36301 % (worst),
/// limit 8, margin -0.36301: fail.  Current verdict: fail (h11 and TDD).
///
/// Two such converters on the PCC: IL = 200 A, Isc/IL = 15, row "< 20"
/// (4, 2, 1.5, 0.6, 0.3; TDD 5).  Values in % of IL are unchanged
/// (2 I_h / 2 IL): h5 6.5 > 4 fails (margin -2.5), h7 3.0 < 4 passes,
/// h2 0.5 < 1.0 passes, TDD 8.363 > 5 fails.
#[test]
fn worked_ieee519_case() {
    let mut a = vec![0.0; 51];
    a[1] = 95.0;
    a[2] = 0.5;
    a[5] = 6.0;
    a[7] = 3.0;
    a[11] = 3.8;
    a[13] = 2.0;
    let mut b = a.clone();
    b[5] = 6.5;
    let sp = vec![a.clone(), b, a];
    let (c, row, allowance) = ieee519_current_checks(&sp, 3000.0, 100.0, 480.0, 6, 1);
    assert_eq!(row.label, "20 <= Isc/IL < 50");
    assert!(allowance.is_none());
    let expect = [
        ("h2", 0.5, 1.75, 1.25, true, "a"),
        ("h5", 6.5, 7.0, 0.5, true, "b"),
        ("h7", 3.0, 7.0, 4.0, true, "a"),
        ("h11", 3.8, 3.5, -0.3, false, "a"),
        ("h13", 2.0, 3.5, 1.5, true, "a"),
        ("TDD", 8.36301, 8.0, -0.36301, false, "b"),
    ];
    for (name, v, lim, m, pass, ph) in expect {
        let k = by_name(&c, name);
        assert!(close(k.value, v, 1e-5), "{name} value {}", k.value);
        assert!(close(k.limit, lim, 1e-12), "{name} limit {}", k.limit);
        assert!(close(k.margin, m, 1e-5), "{name} margin {}", k.margin);
        assert_eq!(k.pass, pass, "{name}");
        assert_eq!(k.phase, ph, "{name}");
    }
    // Orders 2..=50, TDD, dc offset.
    assert_eq!(c.len(), 49 + 2);
    assert!(by_name(&c, "dc offset").pass);

    let (c2, row2, _) = ieee519_current_checks(&sp, 3000.0, 100.0, 480.0, 6, 2);
    assert_eq!(row2.label, "Isc/IL < 20");
    let h5 = by_name(&c2, "h5");
    assert!(close(h5.value, 6.5, 1e-9) && close(h5.margin, -2.5, 1e-9) && !h5.pass);
    assert!(by_name(&c2, "h7").pass);
    assert!(by_name(&c2, "h2").pass && close(by_name(&c2, "h2").limit, 1.0, 1e-12));
    let tdd = by_name(&c2, "TDD");
    assert!(close(tdd.value, 8.36301, 1e-5) && tdd.limit == 5.0 && !tdd.pass);
}

// ------------------------------------------------------------- IEC 61000-3-12

#[test]
fn iec_table3_entries_and_interpolation() {
    let t = &IEC61000_3_12_TABLE3;
    assert_eq!(t[0], [33.0, 10.7, 7.2, 3.1, 2.0, 13.0, 22.0]);
    assert_eq!(t[2], [120.0, 19.0, 12.0, 7.0, 4.0, 22.0, 28.0]);
    assert_eq!(t[4], [350.0, 40.0, 25.0, 15.0, 10.0, 48.0, 46.0]);
    assert_eq!(iec_limits(33.0).unwrap(), [10.7, 7.2, 3.1, 2.0, 13.0, 22.0]);
    assert_eq!(iec_limits(66.0).unwrap(), [14.0, 9.0, 5.0, 3.0, 16.0, 25.0]);
    assert!(iec_limits(32.99).is_none());
    assert_eq!(
        iec_limits(1e6).unwrap(),
        [40.0, 25.0, 15.0, 10.0, 48.0, 46.0]
    );
    // Worked by hand at Rsce = 50, between the rows 33 and 66:
    // u = (50 - 33) / (66 - 33) = 17/33 = 0.515152.
    // I5 = 10.7 + u (14 - 10.7) = 10.7 + 1.7 = 12.4
    // I7 = 7.2 + u 1.8 = 8.127273;  I11 = 3.1 + u 1.9 = 4.078788
    // I13 = 2 + u 1 = 2.515152;     THC = 13 + u 3 = 14.545455
    // PWHC = 22 + u 3 = 23.545455
    let l = iec_limits(50.0).unwrap();
    let want = [12.4, 8.127273, 4.078788, 2.515152, 14.545455, 23.545455];
    for j in 0..6 {
        assert!(close(l[j], want[j], 1e-6), "{j}: {}", l[j]);
    }
    // Rsce = 300, halfway between 250 and 350: the means of the two rows.
    let l = iec_limits(300.0).unwrap();
    assert_eq!(l, [35.5, 22.5, 13.5, 8.5, 42.5, 42.0]);
}

/// Worked by hand at Rsce = 50 (limits from the test above).
///
/// One phase (all three equal): I1 = 40 A, I5 = 4.8, I7 = 3.0, I11 = 1.6,
/// I13 = 1.0, I17 = 0.6, I19 = 0.5 A.
/// I5 = 12 % (limit 12.4, margin +0.4, pass); I7 = 7.5 % (8.127, pass);
/// I11 = 4.0 % (4.0788, pass); I13 = 2.5 % (2.5152, pass).
/// THC = sqrt(23.04 + 9 + 2.56 + 1 + 0.36 + 0.25) = sqrt(36.21) = 6.017475 A
/// = 15.04369 % > 14.545455: fail, margin -0.49823.
/// PWHC = sqrt(17 x 0.36 + 19 x 0.25) = sqrt(10.87) = 3.296968 A = 8.24242 %: pass.
/// Even harmonics are zero: pass (limits 16/h: h2 8 %, h12 1.3333 %).
///
/// Smallest Rsce that passes (each column inverted on its segment):
/// I5 12: 33 + (12 - 10.7)/3.3 x 33 = 46; I7 7.5: 33 + 0.3/1.8 x 33 = 38.5;
/// I11 4: 33 + 0.9/1.9 x 33 = 48.63; I13 2.5: 33 + 0.5 x 33 = 49.5;
/// THC 15.04369: 33 + 2.04369/3 x 33 = 55.4806; PWHC: 33.  The largest: 55.4806.
#[test]
fn worked_iec_case() {
    let mut s = vec![0.0; 51];
    s[1] = 40.0;
    s[5] = 4.8;
    s[7] = 3.0;
    s[11] = 1.6;
    s[13] = 1.0;
    s[17] = 0.6;
    s[19] = 0.5;
    let sp = vec![s.clone(), s.clone(), s];
    let (c, min_rsce) = iec_checks(&sp, 50.0).unwrap();
    let expect = [
        ("h5", 12.0, 12.4, true),
        ("h7", 7.5, 8.127273, true),
        ("h11", 4.0, 4.078788, true),
        ("h13", 2.5, 2.515152, true),
        ("THC", 15.04369, 14.545455, false),
        ("PWHC", 8.24242, 23.545455, true),
        ("h2", 0.0, 8.0, true),
        ("h12", 0.0, 16.0 / 12.0, true),
    ];
    for (name, v, lim, pass) in expect {
        let k = by_name(&c, name);
        assert!(close(k.value, v, 1e-4), "{name} value {}", k.value);
        assert!(close(k.limit, lim, 1e-6), "{name} limit {}", k.limit);
        assert_eq!(k.pass, pass, "{name}");
    }
    assert!(close(by_name(&c, "THC").margin, -0.49823, 1e-4));
    assert!(close(min_rsce.unwrap(), 55.4806, 1e-3), "{min_rsce:?}");
    // At Rsce 56 it passes.
    let (c, _) = iec_checks(&sp, 56.0).unwrap();
    assert!(c.iter().all(|k| k.pass));
    // Below 33: no limits.
    assert!(iec_checks(&sp, 30.0).is_none());
}

// ------------------------------------------------------------- on the engine

/// A 30 kW six-pulse diode drive front end on 480 V 60 Hz, no reactor, no
/// choke, behind a 500 kVA 5 % transformer; the facility's maximum demand
/// current IL is 200 A (the drive is part of the load at the PCC).
fn drive_480() -> Scenario {
    let mut s = Scenario::default();
    s.supply.v_ll_rms_v = 480.0;
    s.supply.f_hz = 60.0;
    s.source.impedance = SourceImpedance::Transformer {
        s_kva: 500.0,
        z_pct: 5.0,
        x_over_r: 6.0,
    };
    s.source.reactor = LineReactor::None;
    s.dc.cap_f = 2.2e-3;
    s.dc.load = DcLoad::ConstantPower { p_w: 30e3 };
    s.analysis.rated_power_w = 30e3;
    s.analysis.demand_current_a = 200.0;
    s
}

#[test]
fn analysis_carries_compliance_with_stated_basis() {
    let s = drive_480();
    let a = rectifield::analyze(&s).unwrap();
    let c = a.compliance.as_ref().unwrap();
    let d = &a.derived;
    let ie = &c.ieee519;
    assert_eq!(ie.edition, "IEEE Std 519-2014");
    assert!(close(ie.i_l_a, 200.0, 1e-12));
    assert!(close(ie.isc_over_il, d.i_sc_a / 200.0, 1e-9));
    // 500 kVA 5 % at 480 V: Isc = 601.4 / 0.05 = 12.03 kA, Isc/IL = 60.1.
    assert!(close(
        ie.isc_over_il,
        500e3 / (3f64.sqrt() * 480.0) / 0.05 / 200.0,
        1e-6
    ));
    assert_eq!(ie.row, "50 <= Isc/IL < 100");
    assert!(c.from_memory && !c.from_memory_notes.is_empty());
    assert!(c.governing_note.contains("utility"));
    assert!(ie.row_convention.contains("exactly 20"));
    assert!(c.fixes.is_none(), "the search is off by default");
    // Current checks: orders 2..=50, TDD, dc offset; TDD matches results.
    assert_eq!(ie.current.len(), 51);
    let r = a.results.as_ref().unwrap();
    assert!(close(
        by_name(&ie.current, "TDD").value,
        r.tdd_max_pct,
        1e-9
    ));
    // IEC: 36 A rated, in scope; Rsce = Ssc / Sequ = Isc / Iequ.
    let iec = &c.iec61000_3_12;
    assert!(iec.applicable, "{:?}", iec.conditions);
    assert!(close(iec.rsce, d.i_sc_a / d.rated_current_a, 1e-9));
    // No reactor: fails.
    assert_eq!(c.verdict, Verdict::Fail);
    // JSON round trip of the output.
    let j = serde_json::to_string(c).unwrap();
    let back: Compliance = serde_json::from_str(&j).unwrap();
    assert_eq!(back.verdict, c.verdict);
}

#[test]
fn pcc_voltage_from_impedance_matches_simulated_pcc_voltage() {
    // With a background 5th (2 %) and 7th (1 %), so that both parts count.
    let mut s = drive_480();
    s.source.reactor = LineReactor::Percent {
        z_pct: 3.0,
        x_over_r: 30.0,
    };
    s.supply.harmonics = vec![
        VoltageHarmonic {
            order: 5,
            magnitude_pct: 2.0,
            phase_deg: 30.0,
        },
        VoltageHarmonic {
            order: 7,
            magnitude_pct: 1.0,
            phase_deg: -40.0,
        },
    ];
    let a = rectifield::analyze(&s).unwrap();
    let sim = a.sim.as_ref().unwrap();
    let v = pcc_voltage_phasors(sim, &a.derived, 1);
    let v_nom = 480.0 / 3f64.sqrt();
    let mut worst = 0.0f64;
    for (k, vk) in v.iter().enumerate() {
        let pcc = &sim.signals[sim.roles.pcc_v[k]].harmonics;
        for h in 2..=50 {
            let x = &pcc[h - 1];
            let z = num_complex::Complex64::from_polar(x.rms, x.phase_deg.to_radians());
            worst = worst.max((z - vk[h]).norm() / v_nom);
        }
    }
    println!("largest difference {worst:e} of the nominal phase voltage");
    assert!(worst < 1e-7, "{worst}");
    // The background shows: the 5th is at least near 2 % minus the drive's part.
    let c = a.compliance.unwrap();
    assert!(by_name(&c.ieee519.voltage, "h5").value > 0.5);
}

#[test]
fn several_converters_scale_voltage_and_row() {
    let s1 = drive_480();
    let mut s3 = s1.clone();
    s3.compliance.converters_at_pcc = 3;
    let c1 = rectifield::analyze(&s1).unwrap().compliance.unwrap();
    let c3 = rectifield::analyze(&s3).unwrap().compliance.unwrap();
    assert!(close(
        c3.ieee519.isc_over_il * 3.0,
        c1.ieee519.isc_over_il,
        1e-9
    ));
    assert!(close(c3.ieee519.i_l_a, 600.0, 1e-9));
    assert_eq!(c3.ieee519.row, "20 <= Isc/IL < 50"); // 60.1 / 3 = 20.04
                                                     // Current values in % of IL are unchanged (N I_h / N IL); no background,
                                                     // so the PCC voltage harmonics triple.
    for (a, b) in c1.ieee519.current.iter().zip(&c3.ieee519.current) {
        assert!(close(a.value, b.value, 1e-9 * a.value.max(1.0)));
    }
    for (a, b) in c1.ieee519.voltage.iter().zip(&c3.ieee519.voltage) {
        // (The supply EMF's own harmonics, zero in the circuit, come out at the
        // quadrature's leakage level, below 1e-7 of its fundamental (1e-5 %),
        // and are not tripled; see sim::solver::GL_X.)
        assert!(
            close(3.0 * a.value, b.value, 1e-9 * b.value + 1e-5),
            "{} {} {}",
            a.name,
            a.value,
            b.value
        );
    }
    // IEC is per converter: unchanged.
    assert_eq!(c1.iec61000_3_12.rsce, c3.iec61000_3_12.rsce);
    assert!(c3
        .notes
        .iter()
        .any(|n| n.contains("3 identical converters")));
}

#[test]
fn what_would_pass_reactor_search_on_a_480v_drive() {
    let mut s = drive_480();
    s.compliance.search_fixes = true;
    let a = rectifield::analyze(&s).unwrap();
    let c = a.compliance.unwrap();
    assert_eq!(c.verdict, Verdict::Fail);
    let f = c.fixes.expect("search ran");
    for t in &f.tried {
        println!(
            "{} {} %: {:?} TDD {:?} dVdc {:?} V {}",
            t.kind, t.size_pct, t.verdict, t.tdd_pct, t.v_dc_change_v, t.note
        );
    }
    // Bounded: at most the two lists.
    assert!(f.tried.len() <= REACTOR_STEPS_PCT.len() + CHOKE_STEPS_PCT.len());
    let i = f.smallest_reactor.expect("some reactor step passes");
    let best = &f.tried[i];
    assert_eq!(best.kind, "line reactor");
    assert_eq!(best.verdict, Some(Verdict::Pass));
    // Every smaller reactor step tried fails.
    for t in f.tried[..i].iter().filter(|t| t.kind == "line reactor") {
        assert!(t.size_pct < best.size_pct);
        assert_ne!(t.verdict, Some(Verdict::Pass));
    }
    // A series reactor costs DC bus voltage.
    assert!(best.v_dc_change_v.unwrap() < 0.0);
    let base_v = a.results.unwrap().dc.v_avg_v;
    assert!(close(
        best.v_dc_avg_v.unwrap() - base_v,
        best.v_dc_change_v.unwrap(),
        1e-9
    ));
    // Independently: the scenario with that reactor passes when analysed on its own.
    let mut s2 = drive_480();
    s2.source.reactor = LineReactor::Percent {
        z_pct: best.size_pct,
        x_over_r: 30.0,
    };
    let c2 = rectifield::analyze(&s2).unwrap().compliance.unwrap();
    assert_eq!(c2.verdict, Verdict::Pass);
    assert!(close(
        by_name(&c2.ieee519.current, "TDD").value,
        best.tdd_pct.unwrap(),
        1e-9
    ));
    // And the inductance reported is that of the percent reactor.
    let d2 = derive(&s2).unwrap();
    assert!(close(best.l_h, d2.l_reactor_h, 1e-12));
    // Whatever the choke list gives, a passing choke is the first passing one.
    if let Some(j) = f.smallest_choke {
        assert_eq!(f.tried[j].verdict, Some(Verdict::Pass));
        assert_eq!(f.tried[j].kind, "DC choke");
    }
}

#[test]
fn half_wave_bridge_dc_offset_is_not_allowed() {
    let mut s = drive_480();
    s.bridge.kind = BridgeKind::ThreePulseDiode;
    s.dc.load = DcLoad::Resistor { r_ohm: 10.0 };
    s.dc.cap_f = 0.0;
    let c = rectifield::analyze(&s).unwrap().compliance.unwrap();
    let dc = by_name(&c.ieee519.current, "dc offset");
    assert!(!dc.pass && dc.value > 1.0, "{dc:?}");
    assert_eq!(c.iec61000_3_12.verdict, Verdict::NotApplicable);
}

#[test]
fn fewer_orders_than_50_is_incomplete_not_pass() {
    // A case that passes everything at 50 orders...
    let mut s = drive_480();
    s.source.reactor = LineReactor::Percent {
        z_pct: 8.0,
        x_over_r: 30.0,
    };
    s.analysis.demand_current_a = 400.0;
    let c = rectifield::analyze(&s).unwrap().compliance.unwrap();
    assert_eq!(c.ieee519.verdict, Verdict::Pass, "{:?}", c.ieee519.current);
    // ...is only incomplete when fewer orders were computed.
    s.analysis.h_max = 25;
    let c = rectifield::analyze(&s).unwrap().compliance.unwrap();
    assert_eq!(c.ieee519.verdict, Verdict::Incomplete);
    assert!(c.notes.iter().any(|n| n.contains("h_max")));
}

#[test]
fn settings_in_the_scenario_format() {
    let s = from_json("{}").unwrap();
    assert_eq!(s.compliance, ComplianceSettings::default());
    assert_eq!(s.compliance.converters_at_pcc, 1);
    assert!(!s.compliance.search_fixes);
    let s = from_json(r#"{"compliance": {"converters_at_pcc": 4, "search_fixes": true}}"#).unwrap();
    assert_eq!(s.compliance.converters_at_pcc, 4);
    assert_eq!(s.compliance.reactor_steps_pct, REACTOR_STEPS_PCT.to_vec());
    let e = from_json(r#"{"compliance": {"converters": 4}}"#).unwrap_err();
    assert!(e.starts_with("compliance"), "{e}");
    let mut s = drive_480();
    s.compliance.converters_at_pcc = 0;
    assert_eq!(
        rectifield::analyze(&s).unwrap_err().field,
        "compliance.converters_at_pcc"
    );
    s.compliance.converters_at_pcc = 1;
    s.compliance.reactor_steps_pct = vec![3.0, f64::NAN];
    assert_eq!(
        rectifield::analyze(&s).unwrap_err().field,
        "compliance.reactor_steps_pct"
    );
}

/// A supply whose background 5th (6 % as given) is already past the 5 %
/// of IEEE Std 519-2014 Table 1 (V <= 1 kV: 5 % individual, 8 % THD; typed
/// from memory, see the module notes).  The PCC voltage is E_h - Z_h I_h
/// (the method stated in `compliance`), so this installation cannot bring
/// it under the limit: the failure is said to be the background's, and no
/// reactor or choke is offered for it; a current failure still is.
#[test]
fn a_background_past_table_1_is_the_supply_s_not_a_fix_for_the_converter() {
    let mut s = Scenario::default();
    s.supply.harmonics = vec![VoltageHarmonic {
        order: 5,
        magnitude_pct: 6.0,
        phase_deg: 0.0,
    }];
    s.source.reactor = LineReactor::None;
    s.dc.cap_f = 0.0;
    s.dc.choke_l_h = 0.5;
    s.dc.load = DcLoad::Resistor { r_ohm: 50.0 };
    s.analysis.rated_power_w = 6e3;
    // A large demand current: the current limits pass.
    s.analysis.demand_current_a = 200.0;
    s.compliance.search_fixes = true;
    let a = rectifield::analysis::analyze(&s).unwrap();
    let c = a.compliance.as_ref().unwrap();
    let h5 = by_name(&c.ieee519.voltage, "h5");
    assert!(!h5.pass && h5.value > 6.0 - 0.5, "{h5:?}");
    assert_eq!(c.ieee519.current_verdict, Verdict::Pass);
    assert!(c.ieee519.voltage_fails_on_background_only);
    assert!(c.fixes.is_none(), "no converter-side fix for a background");
    assert!(c
        .ieee519
        .notes
        .iter()
        .any(|n| n.contains("background already exceeds")));
    // Without the background the same installation passes Table 1.
    let mut clean = s.clone();
    clean.supply.harmonics.clear();
    let a = rectifield::analysis::analyze(&clean).unwrap();
    let c = a.compliance.as_ref().unwrap();
    assert_eq!(c.ieee519.voltage_verdict, Verdict::Pass);
    assert!(!c.ieee519.voltage_fails_on_background_only);
    // With the demand current at the rating the current limits fail too:
    // the fix search runs, judging the steps by the current limits.
    s.analysis.demand_current_a = 0.0;
    s.dc.choke_l_h = 0.0;
    s.dc.cap_f = 1e-3;
    let a = rectifield::analysis::analyze(&s).unwrap();
    let c = a.compliance.as_ref().unwrap();
    assert_eq!(c.ieee519.current_verdict, Verdict::Fail);
    assert!(c.fixes.is_some());
}
