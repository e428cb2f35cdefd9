//! A deterministic mutation fuzzer over the scenario parser and the solver
//! entry point: the stand-in for `cargo fuzz`, which needs nightly Rust (not
//! installable on the build machine).  It runs inside `cargo test` for a
//! bounded time (`RF_FUZZ_SECS`, default 20 s; `RF_FUZZ_SEED` to change the
//! sequence).
//!
//! Seeds are the built-in examples and the default scenario as JSON.  Each
//! case applies one to three mutations (bytes, truncation, numbers, keys,
//! types, nesting, unicode, markup in text fields) and feeds the text to
//! `scenario::from_json`; when it parses and validates, to `analyze`.  Every
//! call must return (no panic, caught with `catch_unwind`) within a time
//! bound, and every error must carry a message.

mod common;
use common::rng::Rng;
use rectifield::scenario::{from_json, to_json};
use serde_json::Value;
use std::sync::mpsc;
use std::time::{Duration, Instant};

/// Numbers a mutation may put in place of another.
const NUMBERS: [&str; 18] = [
    "0",
    "-0",
    "-1",
    "1e308",
    "-1e308",
    "1e400",
    "4.9e-324",
    "18446744073709551616",
    "-9223372036854775809",
    "4294967296",
    "1e-7",
    "179.9999",
    "180",
    "2000",
    "20001",
    "1e6",
    "0.5",
    "3",
];

/// Strings a mutation may put in place of a value.
const STRINGS: [&str; 12] = [
    "\"NaN\"",
    "\"Infinity\"",
    "\"-inf\"",
    "\"<script>alert(1)</script>\"",
    "\"<img src=x onerror=alert(1)>\"",
    "\"\\u0000\\u202e\\ud83d\\ude00 \u{1F600} \u{0301}\"",
    "\"\\ud800\"",
    "\"six_pulse_thyristor\"",
    "\"twelve_pulse_parallel\"",
    "\"\"",
    "null",
    "true",
];

const KINDS: [&str; 12] = [
    "direct",
    "transformer",
    "short_circuit_mva",
    "short_circuit_ka",
    "none",
    "henry",
    "percent",
    "resistor",
    "rle",
    "constant_current",
    "constant_power",
    "bogus",
];

fn random_path(v: &Value, r: &mut Rng) -> Vec<String> {
    let mut path = Vec::new();
    let mut cur = v;
    loop {
        match cur {
            Value::Object(m) if !m.is_empty() && (path.is_empty() || r.chance(0.7)) => {
                let k = m.keys().nth(r.below(m.len())).unwrap().clone();
                cur = &m[&k];
                path.push(k);
            }
            Value::Array(a) if !a.is_empty() && r.chance(0.7) => {
                let i = r.below(a.len());
                cur = &a[i];
                path.push(i.to_string());
            }
            _ => return path,
        }
    }
}

fn at_mut<'a>(v: &'a mut Value, path: &[String]) -> &'a mut Value {
    let mut cur = v;
    for p in path {
        cur = match cur {
            Value::Object(m) => m.get_mut(p).unwrap(),
            Value::Array(a) => &mut a[p.parse::<usize>().unwrap()],
            _ => unreachable!(),
        };
    }
    cur
}

/// One structural mutation on the JSON value.
fn mutate_value(v: &mut Value, r: &mut Rng) {
    let path = random_path(v, r);
    let target = at_mut(v, &path);
    match r.below(9) {
        0 => *target = serde_json::from_str(NUMBERS[r.below(NUMBERS.len())]).unwrap_or(Value::Null),
        1 => *target = serde_json::from_str(STRINGS[r.below(STRINGS.len())]).unwrap_or(Value::Null),
        2 => {
            if let Some(x) = target.as_f64() {
                let f = [1e-9, 1e-3, 0.5, 2.0, 1e3, 1e9, -1.0][r.below(7)];
                if let Some(n) = serde_json::Number::from_f64(x * f) {
                    *target = Value::Number(n);
                }
            }
        }
        3 => *target = Value::Array(vec![target.clone()]),
        4 => *target = serde_json::json!({ "kind": KINDS[r.below(KINDS.len())] }),
        5 => {
            if let Value::Object(m) = target {
                m.insert(
                    "kind".into(),
                    Value::String(KINDS[r.below(KINDS.len())].into()),
                );
            }
        }
        6 => {
            let mut deep = target.clone();
            for _ in 0..r.below(300) + 1 {
                deep = Value::Array(vec![deep]);
            }
            *target = deep;
        }
        7 => {
            if let Value::Array(a) = target {
                // Many copies (a long list: harmonics, steps).
                let n = r.below(200);
                if let Some(x) = a.first().cloned() {
                    a.extend(std::iter::repeat_n(x, n));
                }
            }
        }
        _ => {
            if let Value::Object(m) = target {
                if !m.is_empty() {
                    let k = m.keys().nth(r.below(m.len())).unwrap().clone();
                    m.remove(&k);
                }
            } else {
                *target = Value::Object(Default::default());
            }
        }
    }
}

/// One mutation on the text.
fn mutate_text(t: &mut Vec<u8>, r: &mut Rng, other: &[u8]) {
    if t.is_empty() {
        t.extend_from_slice(b"{}");
    }
    let n = t.len();
    match r.below(8) {
        0 => t.truncate(r.below(n)),
        1 => {
            let i = r.below(n);
            t[i] = (r.next_u64() & 0xff) as u8;
        }
        2 => {
            let i = r.below(n);
            t.remove(i);
        }
        3 => {
            let i = r.below(n + 1);
            let piece: &[u8] = [
                &b"{"[..],
                b"}",
                b"[",
                b"]",
                b",",
                b":",
                b"\"",
                b"\\",
                b"1e999",
                b"NaN",
                b"\xff\xfe",
                "\u{FEFF}".as_bytes(),
                b"\"name\": \"dup\",",
                b"\"schema_version\": 99,",
            ][r.below(14)];
            t.splice(i..i, piece.iter().copied());
        }
        4 => {
            // Duplicate a key: copy the first `"key": value,` pair after `{`.
            if let Some(p) = t.iter().position(|&c| c == b'{') {
                let rest = &t[p + 1..];
                if let Some(q) = rest.iter().position(|&c| c == b',') {
                    let pair = rest[..=q].to_vec();
                    t.splice(p + 1..p + 1, pair);
                }
            }
        }
        5 => {
            // Splice a piece of another seed.
            let a = r.below(other.len());
            let b = (a + r.below(200)).min(other.len());
            let i = r.below(n + 1);
            t.splice(i..i, other[a..b].iter().copied());
        }
        6 => {
            // Replace a run of digits with another number.
            let starts: Vec<usize> = (0..n).filter(|&i| t[i].is_ascii_digit()).collect();
            if !starts.is_empty() {
                let i = starts[r.below(starts.len())];
                let mut j = i;
                while j < n && (t[j].is_ascii_digit() || t[j] == b'.' || t[j] == b'e') {
                    j += 1;
                }
                let num = NUMBERS[r.below(NUMBERS.len())].as_bytes();
                t.splice(i..j, num.iter().copied());
            }
        }
        _ => {
            let i = r.below(n + 1);
            t.splice(i..i, std::iter::repeat_n(b'[', 200 + r.below(5000)));
        }
    }
}

enum Outcome {
    ParseError,
    Refused,
    Analysed,
}

fn run_case(text: String, limit: Duration) -> Result<Outcome, String> {
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        let r = std::panic::catch_unwind(move || -> Result<Outcome, String> {
            match from_json(&text) {
                Err(e) => {
                    if e.trim().is_empty() {
                        return Err("empty parse error".into());
                    }
                    Ok(Outcome::ParseError)
                }
                Ok(s) => {
                    if rectifield::validate::validate(&s).is_err() {
                        return match rectifield::analyze(&s) {
                            Err(e) if !e.field.is_empty() && !e.reason.is_empty() => {
                                Ok(Outcome::Refused)
                            }
                            Err(e) => Err(format!("error without field or reason: {e:?}")),
                            Ok(_) => Err("validate refused it but analyze accepted it".into()),
                        };
                    }
                    match rectifield::analyze(&s) {
                        Err(_) => Ok(Outcome::Refused),
                        Ok(a) => {
                            // Saving the case again must give a file that reads back.
                            let back = from_json(&to_json(&s));
                            if back.as_ref() != Ok(&s) {
                                return Err(format!("round trip changed the case: {back:?}"));
                            }
                            let _ = a;
                            Ok(Outcome::Analysed)
                        }
                    }
                }
            }
        });
        let _ = tx.send(r);
    });
    match rx.recv_timeout(limit) {
        Ok(Ok(r)) => r,
        Ok(Err(p)) => Err(format!(
            "panic: {}",
            p.downcast_ref::<String>()
                .cloned()
                .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_default()
        )),
        Err(_) => Err(format!("no answer within {limit:?}")),
    }
}

#[test]
fn fuzz_parser_and_solver() {
    let secs: f64 = std::env::var("RF_FUZZ_SECS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20.0);
    let seed: u64 = std::env::var("RF_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(0xF022);
    let mut seeds: Vec<String> = rectifield::examples::all()
        .iter()
        .map(|(_, s)| to_json(s))
        .collect();
    seeds.push(to_json(&rectifield::Scenario::default()));
    let budget = Duration::from_secs_f64(secs);
    let t0 = Instant::now();
    let mut r = Rng(seed);
    let (mut cases, mut parse_err, mut refused, mut analysed) = (0usize, 0, 0, 0);
    let mut failures = Vec::new();
    let mut slowest = Duration::ZERO;
    while t0.elapsed() < budget && cases < 1_000_000 {
        let i = r.below(seeds.len());
        let other = seeds[r.below(seeds.len())].clone();
        let text = if r.chance(0.5) {
            let mut v: Value = serde_json::from_str(&seeds[i]).unwrap();
            for _ in 0..r.below(3) + 1 {
                mutate_value(&mut v, &mut r);
            }
            serde_json::to_string(&v).unwrap()
        } else {
            let mut t = seeds[i].clone().into_bytes();
            for _ in 0..r.below(3) + 1 {
                mutate_text(&mut t, &mut r, other.as_bytes());
            }
            String::from_utf8_lossy(&t).into_owned()
        };
        cases += 1;
        let tc = Instant::now();
        // Analysis in the dev profile takes up to a few seconds for these cases.
        match run_case(text.clone(), Duration::from_secs(30)) {
            Ok(Outcome::ParseError) => parse_err += 1,
            Ok(Outcome::Refused) => refused += 1,
            Ok(Outcome::Analysed) => analysed += 1,
            Err(e) => failures.push(format!(
                "case {cases}: {e}\n{}",
                text.chars().take(3000).collect::<String>()
            )),
        }
        slowest = slowest.max(tc.elapsed());
    }
    println!(
        "fuzz: {cases} cases in {:?} (seed {seed}): {parse_err} parse errors, {refused} refused by validation, {analysed} analysed; slowest case {slowest:?}; {} failures",
        t0.elapsed(),
        failures.len()
    );
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
    assert!(cases > 100, "only {cases} cases ran");
}
