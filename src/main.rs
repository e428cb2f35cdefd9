//! `rectifield`: the command-line companion of the page, on the same engine.

use std::io::Read;
use std::process::ExitCode;

const HELP: &str =
    "rectifield — three-phase rectifier analysis (offline, exact switched-circuit simulation)

usage:
  rectifield solve FILE [--json]                 analyse a scenario (FILE, or - for standard input)
  rectifield sweep FILE --vary PATH=FROM:TO:N[:log]  CSV of the headline results over a sweep
  rectifield check FILE [--json]                 grid-compliance verdict (exit status 1 when it fails)
  rectifield field FILE [--json]                 field check: expected DC bus and the faults that fit the readings
  rectifield examples DIR                        write the built-in example scenarios to DIR
  rectifield example                             print the default scenario as JSON
  rectifield COMMAND --help                      help for one command
  rectifield --version

exit status: 0 success, 1 a compliance check failed, 2 bad input (the field path
and the reason on standard error), 3 the simulation could not be solved.

Safety: DC buses and capacitors can kill. Wait the discharge time on the label,
prove the bus dead with a rated meter, lock out and tag out; qualified persons
only; local codes and the maker's manual govern.";

const HELP_SOLVE: &str = "usage: rectifield solve FILE [--json]
  FILE    scenario JSON (see docs/scenario-format.md), or - for standard input
  --json  print the complete results as JSON (waveforms included)";

const HELP_SWEEP: &str = "usage: rectifield sweep FILE --vary PATH=FROM:TO:N
  PATH    dotted path of a numeric scenario field, e.g. dc.load.p_w,
          source.reactor.z_pct, bridge.alpha_deg, supply.v_ll_rms_v,
          supply.phase_magnitude_pu.1
  FROM:TO:N  N evenly spaced values from FROM to TO (N = 1..10000)
  FROM:TO:N:log  N values in equal ratios (FROM and TO above zero): a
          capacitance or an inductance across decades
  prints CSV: the varied value, then the headline results; a point that cannot
  be solved has its reason in the last column";

const HELP_CHECK: &str = "usage: rectifield check FILE [--json]
  judges the scenario against IEEE Std 519-2014 (and IEC 61000-3-12 where it
  applies) at the point of common coupling, and searches the standard reactor
  and choke steps for what would pass; exit status 1 when a limit is exceeded";

const HELP_EXAMPLES: &str = "usage: rectifield examples DIR
  writes each built-in example scenario to DIR/<name>.json (DIR is created)";

fn read_input(path: &str) -> Result<String, String> {
    let text = if path == "-" {
        let mut s = String::new();
        std::io::stdin()
            .read_to_string(&mut s)
            .map_err(|e| format!("standard input: {e}"))?;
        s
    } else {
        let meta = std::fs::metadata(path).map_err(|e| format!("{path}: {e}"))?;
        if meta.len() > rectifield::scenario::MAX_FILE_BYTES as u64 {
            return Err(format!("{path}: file is larger than 1 MB; not a scenario"));
        }
        std::fs::read_to_string(path).map_err(|e| format!("{path}: {e}"))?
    };
    Ok(text)
}

type CliResult = Result<(String, u8), (u8, String)>;

fn load_scenario(args: &[String]) -> Result<(rectifield::Scenario, Vec<String>), (u8, String)> {
    let mut file = None;
    let mut rest = Vec::new();
    let mut it = args.iter();
    while let Some(a) = it.next() {
        if a == "--vary" {
            rest.push(a.clone());
            if let Some(v) = it.next() {
                rest.push(v.clone());
            }
        } else if a.starts_with("--") {
            rest.push(a.clone());
        } else if file.is_none() {
            file = Some(a.clone());
        } else {
            return Err((2, format!("unexpected argument: {a}")));
        }
    }
    let file = file.ok_or((2, "missing FILE (use - for standard input)".to_string()))?;
    let text = read_input(&file).map_err(|e| (2, e))?;
    let s = rectifield::scenario::from_json(&text).map_err(|e| (2, e))?;
    Ok((s, rest))
}

fn cmd_solve(args: &[String]) -> CliResult {
    if args.iter().any(|a| a == "--help" || a == "-h") {
        return Ok((HELP_SOLVE.into(), 0));
    }
    let (s, rest) = load_scenario(args)?;
    let json = rest.iter().any(|a| a == "--json");
    if let Some(bad) = rest.iter().find(|a| *a != "--json") {
        return Err((2, format!("solve: unknown option {bad}")));
    }
    let a = rectifield::analyze(&s).map_err(|e| (2, e.to_string()))?;
    let code = if a.sim.is_none() { 3 } else { 0 };
    if json {
        Ok((
            serde_json::to_string_pretty(&a).map_err(|e| (2, e.to_string()))?,
            code,
        ))
    } else {
        Ok((rectifield::report::text(&s, &a), code))
    }
}

fn cmd_sweep(args: &[String]) -> CliResult {
    if args.iter().any(|a| a == "--help" || a == "-h") {
        return Ok((HELP_SWEEP.into(), 0));
    }
    let (s, rest) = load_scenario(args)?;
    let pos = rest
        .iter()
        .position(|a| a == "--vary")
        .ok_or((2, "sweep: missing --vary PATH=FROM:TO:N".to_string()))?;
    let spec_text = rest
        .get(pos + 1)
        .ok_or((2, "sweep: missing value after --vary".to_string()))?;
    let spec = rectifield::sweep::parse_vary(spec_text).map_err(|e| (2, e))?;
    let pts = rectifield::sweep::sweep(&s, &spec).map_err(|e| (2, e))?;
    Ok((rectifield::sweep::to_csv(&spec, &pts), 0))
}

fn cmd_examples(args: &[String]) -> CliResult {
    if args.iter().any(|a| a == "--help" || a == "-h") {
        return Ok((HELP_EXAMPLES.into(), 0));
    }
    let dir = args
        .first()
        .ok_or((2, "examples: missing DIR".to_string()))?;
    std::fs::create_dir_all(dir).map_err(|e| (2, format!("{dir}: {e}")))?;
    let mut out = String::new();
    for (stem, s) in rectifield::examples::all() {
        let path = std::path::Path::new(dir).join(format!("{stem}.json"));
        std::fs::write(&path, rectifield::scenario::to_json(&s))
            .map_err(|e| (2, format!("{}: {e}", path.display())))?;
        out.push_str(&format!("wrote {}\n", path.display()));
    }
    Ok((out.trim_end().to_string(), 0))
}

fn cmd_check(args: &[String]) -> CliResult {
    if args.iter().any(|a| a == "--help" || a == "-h") {
        return Ok((HELP_CHECK.into(), 0));
    }
    let (mut s, rest) = load_scenario(args)?;
    let json = rest.iter().any(|a| a == "--json");
    if let Some(bad) = rest.iter().find(|a| *a != "--json") {
        return Err((2, format!("check: unknown option {bad}")));
    }
    s.compliance.search_fixes = true;
    let a = rectifield::analyze(&s).map_err(|e| (2, e.to_string()))?;
    let c = a.compliance.as_ref().ok_or((
        3,
        format!("check: no compliance result ({})", a.warnings.join("; ")),
    ))?;
    let code = if c.verdict == rectifield::compliance::Verdict::Fail {
        1
    } else {
        0
    };
    if json {
        Ok((
            serde_json::to_string_pretty(c).map_err(|e| (2, e.to_string()))?,
            code,
        ))
    } else {
        Ok((rectifield::report::compliance_text(&s, &a), code))
    }
}

/// `field FILE [--json]`: the field check of a drive's front end from
/// nameplate data and meter readings (FILE: field input JSON, or -).
fn cmd_field(args: &[String]) -> CliResult {
    if args.iter().any(|a| a == "--help" || a == "-h") {
        return Ok((
            "usage: rectifield field FILE [--json]
  FILE    field input JSON (nameplate, readings, trips, meter), or - for standard input
  --json  print the complete field report as JSON
  prints what the DC bus should read, the readings each fault would give,
  the faults ranked by their distance from the readings, and the safety cautions"
                .into(),
            0,
        ));
    }
    let mut file = None;
    let mut json = false;
    for a in args {
        match a.as_str() {
            "--json" => json = true,
            s if s.starts_with("--") => return Err((2, format!("field: unknown option {s}"))),
            s if file.is_none() => file = Some(s.to_string()),
            s => return Err((2, format!("unexpected argument: {s}"))),
        }
    }
    let file = file.ok_or((
        2,
        "field: missing FILE (use - for standard input)".to_string(),
    ))?;
    let text = read_input(&file).map_err(|e| (2, e))?;
    let input = rectifield::field::from_json(&text).map_err(|e| (2, e.to_string()))?;
    let rep = rectifield::field::check(&input).map_err(|e| (2, e.to_string()))?;
    if json {
        Ok((
            serde_json::to_string_pretty(&rep).map_err(|e| (2, e.to_string()))?,
            0,
        ))
    } else {
        Ok((rectifield::field::text(&rep), 0))
    }
}

fn run(args: &[String]) -> CliResult {
    match args.first().map(String::as_str) {
        None | Some("--help") | Some("-h") | Some("help") => Ok((HELP.to_string(), 0)),
        Some("--version") => Ok((format!("rectifield {}", env!("CARGO_PKG_VERSION")), 0)),
        Some("example") => Ok((
            rectifield::scenario::to_json(&rectifield::Scenario::default()),
            0,
        )),
        Some("solve") => cmd_solve(&args[1..]),
        Some("sweep") => cmd_sweep(&args[1..]),
        Some("check") => cmd_check(&args[1..]),
        Some("examples") => cmd_examples(&args[1..]),
        Some("field") => cmd_field(&args[1..]),
        Some(other) => Err((2, format!("unknown command: {other} (try --help)"))),
    }
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok((out, code)) => {
            use std::io::Write;
            // A closed pipe (e.g. `| head`) is not an error worth a panic.
            let mut so = std::io::stdout().lock();
            let _ = so
                .write_all(out.as_bytes())
                .and_then(|_| so.write_all(b"\n"));
            ExitCode::from(code)
        }
        Err((code, msg)) => {
            eprintln!("rectifield: {msg}");
            ExitCode::from(code)
        }
    }
}
