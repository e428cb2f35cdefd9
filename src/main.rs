//! `rectifield`: the command-line companion of the page, on the same engine.

use std::io::Read;
use std::process::ExitCode;

const HELP: &str = "rectifield — three-phase rectifier analysis

usage:
  rectifield solve FILE [--json]   analyse a scenario (FILE or - for standard input)
  rectifield example               print the default scenario as JSON
  rectifield --help | --version

exit status: 0 success, 2 bad input (the field path and reason on standard error)";

fn read_input(path: &str) -> Result<String, String> {
    if path == "-" {
        let mut s = String::new();
        std::io::stdin()
            .read_to_string(&mut s)
            .map_err(|e| format!("standard input: {e}"))?;
        Ok(s)
    } else {
        std::fs::read_to_string(path).map_err(|e| format!("{path}: {e}"))
    }
}

fn run(args: &[String]) -> Result<String, (u8, String)> {
    let bad = |m: String| (2u8, m);
    match args.first().map(String::as_str) {
        None | Some("--help") | Some("-h") | Some("help") => Ok(HELP.to_string()),
        Some("--version") => Ok(format!("rectifield {}", env!("CARGO_PKG_VERSION"))),
        Some("example") => Ok(rectifield::scenario::to_json(
            &rectifield::Scenario::default(),
        )),
        Some("solve") => {
            let mut file = None;
            let mut json = false;
            for a in &args[1..] {
                match a.as_str() {
                    "--json" => json = true,
                    "--help" | "-h" => return Ok("usage: rectifield solve FILE [--json]\n  FILE: scenario JSON, or - for standard input\n  --json: print the complete results as JSON".into()),
                    s if file.is_none() => file = Some(s.to_string()),
                    s => return Err(bad(format!("unexpected argument: {s}"))),
                }
            }
            let file =
                file.ok_or_else(|| bad("solve: missing FILE (use - for standard input)".into()))?;
            let text = read_input(&file).map_err(bad)?;
            let scenario = rectifield::scenario::from_json(&text).map_err(bad)?;
            let a = rectifield::analyze(&scenario).map_err(|e| bad(e.to_string()))?;
            if json {
                serde_json::to_string_pretty(&a).map_err(|e| (1, e.to_string()))
            } else {
                Ok(rectifield::report::text(&scenario, &a))
            }
        }
        Some(other) => Err(bad(format!("unknown command: {other} (try --help)"))),
    }
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match run(&args) {
        Ok(out) => {
            println!("{out}");
            ExitCode::SUCCESS
        }
        Err((code, msg)) => {
            eprintln!("rectifield: {msg}");
            ExitCode::from(code)
        }
    }
}
