//! The `polewright` command line: the same design core as the page.

use std::io::{Read, Write};
use std::process::ExitCode;

use polewright::design::{self, DesignError};

const HELP: &str = "\
polewright — state-feedback design: controllability diagnostics, robust pole placement,
closed-loop response. Convention: u = -K x.

USAGE:
    polewright design FILE.json     design from a file and write the result JSON to stdout
    polewright design -             read the design file from standard input
    polewright compare PINNED.json CURRENT.json
                                    design both files and write, as JSON, their key figures
                                    side by side (settling time, overshoot, peak inputs
                                    against limits, gain norm, eigenvector condition, pole
                                    error; tracked outputs) with which is better
    polewright serve [FILE] [--port N]
                                    serve the page (default dist/polewright.html) on
                                    http://127.0.0.1:N/ (default port 8765) until stopped
    polewright export FILE.json --format c|rust|json|csv|vectors [--precision double|float|q15|q31]
                     [--out DIR]
                                    the designed controller for firmware: C99 header and source
                                    (matrices and one controller step), Rust constants, JSON,
                                    CSV, or test vectors (CSV) of the loop simulation; each
                                    with a header (order of states, sign convention, sample
                                    time, limits, tool version, SHA-256 of the document).
                                    Written to DIR, or to standard output
    polewright report FILE.json [--digits N] > record.html
                                    the printable design record (standalone HTML, no script):
                                    plant, pole choice, every gain, the checks with their
                                    figures, exported files' hashes, a sign-off block; figures
                                    with N significant digits (3 to 17, default 5, as the page's
                                    Digits setting)
    polewright --help | --version

DESIGN FILE (JSON, format \"polewright.design\", version 1):
    { \"format\": \"polewright.design\", \"version\": 1,
      \"plant\": { \"a\": [[0, 1], [0, 0]], \"b\": [[0], [1]],
                 \"c\": [[1, 0]], \"d\": [[0]],                (optional)
                 \"state_names\": [\"position\", \"velocity\"],  (optional; also input_names,
                 \"state_units\": [\"m\", \"m/s\"] },            output_names, *_units)
      \"feedback\": { \"poles\": [[-2, 1], [-2, -1]] },       ([re, im], numbers or \"-2±1j\")
      \"actuators\": { \"limit\": [5.0] },                   (optional, one per input)
      \"simulation\": { \"initial_state\": [0.1, 0],          (optional; default: 1 in the
                      \"duration\": 5.0, \"band\": 0.02 } }     first state, horizon from the
                                                            slowest pole, 2 % band)
    Matrices may also be text: one row per line, entries separated by spaces, tabs or commas.

VERSION 2 ADDS (\"version\": 2; see README.md for every key):
    \"feedback\": {\"pattern\": {\"family\": \"bessel\", \"settling_time\": 2}}   prototype poles
                {\"spec\": {\"overshoot\": 0.05, \"settling_time\": 1.5}}     from specifications
                {\"lqr\": {\"q\": [[...]], \"r\": [[...]]}} or {\"lqr\": {\"bryson\": {...}}}
    \"implementation\": {\"sample_time\": 0.001, \"computation_delay\": true}   digital controller
    \"observer\": {\"speed_factor\": 4, \"form\": \"predictor\" | \"current\"}      state estimator
    \"tracking\": {\"mode\": \"feedforward\" | \"integral\", \"outputs\": [...]}    reference tracking
    \"anti_windup\": {\"mode\": \"clamp\" | \"back_calculation\", \"time_constant\": 0.05}
    \"search\": {\"fastest_within_limits\": true, \"situations\": [{\"initial_state\": [...]}]}
    \"simulation\": {\"reference\": [...], \"disturbance\": [...], \"noise_std\": [...], \"seed\": 1}

EXIT STATUS:
    0  the design succeeded (warnings, if any, are in the result)
    1  the design cannot be done as asked (for example an unstable mode that no input
       reaches); the reason is printed on standard error
    2  invalid input; the message names the field, the cause and what to change

CAUTION: a design aid, not a safety function. Verify every gain independently before
use on real equipment; limits, emergency stops and trips must stay independent of this
controller; follow local codes, the applicable functional-safety standards (e.g.
IEC 61508, ISO 13849) and licensed engineering practice.
";

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    // A panic here would be a bug: report it as such instead of a bare abort.
    match std::panic::catch_unwind(|| run(&args)) {
        Ok(code) => code,
        Err(_) => {
            eprintln!("polewright: internal error (please report it with the input that caused it)");
            ExitCode::from(3)
        }
    }
}

fn run(args: &[String]) -> ExitCode {
    match args.first().map(String::as_str) {
        None | Some("-h") | Some("--help") | Some("help") => {
            print!("{HELP}");
            ExitCode::SUCCESS
        }
        Some("-V") | Some("--version") => {
            println!("polewright {}", env!("CARGO_PKG_VERSION"));
            ExitCode::SUCCESS
        }
        Some("design") => design_command(&args[1..]),
        Some("serve") => serve_command(&args[1..]),
        Some("compare") => compare_command(&args[1..]),
        Some("export") => export_command(&args[1..]),
        Some("report") => report_command(&args[1..]),
        Some(other) => {
            eprintln!("polewright: unknown command \"{other}\"; try `polewright --help`");
            ExitCode::from(2)
        }
    }
}

/// The text of a design file, or of standard input for `-`. More than
/// [`design::spec::MAX_DESIGN_BYTES`] is refused before it is read (a file by its size, standard
/// input after one byte more than the limit), so an oversized input costs neither time nor memory.
fn read_source(source: &str) -> Result<String, ExitCode> {
    let limit = design::spec::MAX_DESIGN_BYTES;
    let too_big = |what: &str, size: String| {
        eprintln!("polewright: invalid input: {what} is {size} bytes; design files of up to {limit} bytes (8 MiB) are read");
        ExitCode::from(2)
    };
    let mut bytes = Vec::new();
    if source == "-" {
        std::io::stdin().take(limit as u64 + 1).read_to_end(&mut bytes).map_err(|e| {
            eprintln!("polewright: cannot read standard input: {e}");
            ExitCode::from(2)
        })?;
        if bytes.len() > limit {
            return Err(too_big("standard input", format!("more than {limit}")));
        }
    } else {
        let file = std::fs::File::open(source).map_err(|e| {
            eprintln!("polewright: cannot read {source}: {e}");
            ExitCode::from(2)
        })?;
        let size = file.metadata().map(|m| m.len()).unwrap_or(0);
        if size > limit as u64 {
            return Err(too_big(source, size.to_string()));
        }
        file.take(limit as u64 + 1).read_to_end(&mut bytes).map_err(|e| {
            eprintln!("polewright: cannot read {source}: {e}");
            ExitCode::from(2)
        })?;
        if bytes.len() > limit {
            return Err(too_big(source, format!("more than {limit}")));
        }
    }
    String::from_utf8(bytes).map_err(|e| {
        eprintln!("polewright: invalid input: {source} is not UTF-8 text (byte {}); save the design file as UTF-8", e.utf8_error().valid_up_to());
        ExitCode::from(2)
    })
}

/// Runs one design file; a failure is reported (prefixed with `what`) as its exit code.
fn run_design(text: &str, what: &str) -> Result<design::DesignResult, ExitCode> {
    design::run_text(text).map_err(|e| match e {
        DesignError::Input(e) => {
            eprintln!("polewright: {what}invalid input: {e}");
            ExitCode::from(2)
        }
        DesignError::Infeasible { message } => {
            eprintln!("polewright: {what}the design cannot be done as asked: {message}");
            ExitCode::from(1)
        }
    })
}

fn write_json<T: serde::Serialize>(value: &T) -> ExitCode {
    match serde_json::to_string_pretty(value) {
        Ok(json) => {
            let mut out = std::io::stdout().lock();
            if writeln!(out, "{json}").is_err() {
                return ExitCode::from(1);
            }
            ExitCode::SUCCESS
        }
        Err(e) => {
            eprintln!("polewright: cannot write the result: {e}");
            ExitCode::from(1)
        }
    }
}

/// `export FILE --format c|rust|json|csv|vectors [--precision double|float] [--out DIR]`.
fn export_command(args: &[String]) -> ExitCode {
    use design::export::{export_text, ExportFailure, ExportFormat, Precision};
    let usage = "polewright: `export` takes a design file (or -), --format c|rust|json|csv|vectors, and optionally --precision double|float|q15|q31 and --out DIR";
    let (mut source, mut format, mut precision, mut out) = (None, None, Precision::Double, None);
    let mut it = args.iter();
    while let Some(a) = it.next() {
        match a.as_str() {
            "--format" => match it.next().map(|v| (v, ExportFormat::parse(v))) {
                Some((_, Some(f))) => format = Some(f),
                Some((v, None)) => {
                    eprintln!("polewright: --format \"{v}\" is not one of c, rust, json, csv, vectors");
                    return ExitCode::from(2);
                }
                None => {
                    eprintln!("{usage}");
                    return ExitCode::from(2);
                }
            },
            "--precision" => match it.next().map(|v| (v, Precision::parse(v))) {
                Some((_, Some(p))) => precision = p,
                Some((v, None)) => {
                    eprintln!("polewright: --precision \"{v}\" is not one of double, float, q15, q31");
                    return ExitCode::from(2);
                }
                None => {
                    eprintln!("{usage}");
                    return ExitCode::from(2);
                }
            },
            "--out" => out = it.next().cloned(),
            other if source.is_none() => source = Some(other.to_string()),
            _ => {
                eprintln!("{usage}");
                return ExitCode::from(2);
            }
        }
    }
    let (Some(source), Some(format)) = (source, format) else {
        eprintln!("{usage}");
        return ExitCode::from(2);
    };
    let text = match read_source(&source) {
        Ok(t) => t,
        Err(code) => return code,
    };
    let files = match export_text(&text, format, precision) {
        Ok(f) => f,
        Err(ExportFailure::Design(DesignError::Input(e))) => {
            eprintln!("polewright: invalid input: {e}");
            return ExitCode::from(2);
        }
        Err(ExportFailure::Design(DesignError::Infeasible { message })) => {
            eprintln!("polewright: the design cannot be done as asked: {message}");
            return ExitCode::from(1);
        }
        Err(ExportFailure::Export(e)) => {
            eprintln!("polewright: {e}");
            return ExitCode::from(1);
        }
    };
    match out {
        Some(dir) => {
            if let Err(e) = std::fs::create_dir_all(&dir) {
                eprintln!("polewright: cannot create {dir}: {e}");
                return ExitCode::from(1);
            }
            for f in &files {
                let path = std::path::Path::new(&dir).join(&f.name);
                if let Err(e) = std::fs::write(&path, &f.contents) {
                    eprintln!("polewright: cannot write {}: {e}", path.display());
                    return ExitCode::from(1);
                }
                eprintln!("wrote {}", path.display());
            }
        }
        None => {
            let mut stdout = std::io::stdout().lock();
            for f in &files {
                if files.len() > 1 && writeln!(stdout, "===== {} =====", f.name).is_err() {
                    return ExitCode::from(1);
                }
                if write!(stdout, "{}", f.contents).is_err() {
                    return ExitCode::from(1);
                }
            }
        }
    }
    ExitCode::SUCCESS
}

/// Today's date (UTC) as `YYYY-MM-DD` (civil-from-days, Hinnant's algorithm; from memory).
fn utc_date_today() -> String {
    let secs = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH).map_or(0, |d| d.as_secs());
    let z = (secs / 86_400) as i64 + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1_460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

/// `report FILE`: the standalone design record (HTML) on standard output.
fn report_command(args: &[String]) -> ExitCode {
    let usage = "polewright: `report` takes a design file (or - for standard input) and optionally --digits N (3 to 17)";
    let (source, digits) = match args {
        [source] => (source, design::format::DEFAULT_DIGITS),
        [source, flag, n] | [flag, n, source] if flag == "--digits" => match n.parse::<usize>() {
            Ok(d) if (design::format::MIN_DIGITS..=design::format::MAX_DIGITS).contains(&d) => (source, d),
            _ => {
                eprintln!("polewright: --digits \"{n}\" is not a whole number from 3 to 17");
                return ExitCode::from(2);
            }
        },
        _ => {
            eprintln!("{usage}");
            return ExitCode::from(2);
        }
    };
    let text = match read_source(source) {
        Ok(t) => t,
        Err(code) => return code,
    };
    match design::format::with_digits(digits, || design::export::record::record_from_text(&text, &utc_date_today(), true)) {
        Ok(html) => {
            if write!(std::io::stdout().lock(), "{html}").is_err() {
                return ExitCode::from(1);
            }
            ExitCode::SUCCESS
        }
        Err(DesignError::Input(e)) => {
            eprintln!("polewright: invalid input: {e}");
            ExitCode::from(2)
        }
        Err(DesignError::Infeasible { message }) => {
            eprintln!("polewright: the design cannot be done as asked: {message}");
            ExitCode::from(1)
        }
    }
}

fn design_command(args: &[String]) -> ExitCode {
    let [source] = args else {
        eprintln!("polewright: `design` takes one argument, a design file or - for standard input");
        return ExitCode::from(2);
    };
    match read_source(source).and_then(|text| run_design(&text, "")) {
        Ok(result) => write_json(&result),
        Err(code) => code,
    }
}

/// `{"format": "polewright.comparison", "version": 1, "pinned": file, "current": file,
/// "rows": [{figure, pinned, current, pinned_text, current_text, better}]}`.
#[derive(serde::Serialize)]
struct Comparison<'a> {
    format: &'static str,
    version: u32,
    pinned: &'a str,
    current: &'a str,
    rows: Vec<polewright::editing::ComparisonRow>,
}

fn compare_command(args: &[String]) -> ExitCode {
    let [pinned, current] = args else {
        eprintln!("polewright: `compare` takes two design files: the pinned one, then the current one");
        return ExitCode::from(2);
    };
    if pinned == "-" && current == "-" {
        eprintln!("polewright: only one of the two files can be standard input (-)");
        return ExitCode::from(2);
    }
    let run = |source: &str, what: &str| read_source(source).and_then(|t| run_design(&t, what));
    let a = match run(pinned, &format!("{pinned}: ")) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let b = match run(current, &format!("{current}: ")) {
        Ok(r) => r,
        Err(code) => return code,
    };
    let rows = polewright::editing::compare(&(&a).into(), &(&b).into());
    write_json(&Comparison { format: "polewright.comparison", version: 1, pinned, current, rows })
}

/// A minimal static server for the one-file page, bound to the loopback address only.
fn serve_command(args: &[String]) -> ExitCode {
    let mut file = String::from("dist/polewright.html");
    let mut port: u16 = 8765;
    let mut i = 0;
    while i < args.len() {
        if args[i] == "--port" {
            match args.get(i + 1).and_then(|p| p.parse().ok()) {
                Some(p) => port = p,
                None => {
                    eprintln!("polewright: --port needs a number from 0 to 65535");
                    return ExitCode::from(2);
                }
            }
            i += 2;
        } else {
            file = args[i].clone();
            i += 1;
        }
    }
    let page = match std::fs::read(&file) {
        Ok(p) => p,
        Err(e) => {
            eprintln!("polewright: cannot read {file}: {e} (build it with scripts/build-page)");
            return ExitCode::from(2);
        }
    };
    let listener = match std::net::TcpListener::bind(("127.0.0.1", port)) {
        Ok(l) => l,
        Err(e) => {
            eprintln!("polewright: cannot listen on 127.0.0.1:{port}: {e}");
            return ExitCode::from(1);
        }
    };
    let bound = listener.local_addr().map(|a| a.port()).unwrap_or(port);
    let abs = std::fs::canonicalize(&file).map(|p| p.display().to_string()).unwrap_or(file.clone());
    println!("Polewright page: http://127.0.0.1:{bound}/");
    println!("(or open the file directly: {abs})");
    println!("Serving on the loopback address only; press Ctrl+C to stop.");
    let _ = std::io::stdout().flush();
    for stream in listener.incoming() {
        let Ok(mut stream) = stream else { continue };
        let mut buf = [0u8; 4096];
        let n = stream.read(&mut buf).unwrap_or(0);
        let request = String::from_utf8_lossy(&buf[..n]);
        let target = request.split_whitespace().nth(1).unwrap_or("/");
        let (status, body, kind): (&str, &[u8], &str) = if target == "/" || target == "/polewright.html" || target == "/index.html" {
            ("200 OK", &page, "text/html; charset=utf-8")
        } else {
            ("404 Not Found", b"not found\n", "text/plain; charset=utf-8")
        };
        let header = format!("HTTP/1.1 {status}\r\nContent-Type: {kind}\r\nContent-Length: {}\r\nCache-Control: no-store\r\nX-Content-Type-Options: nosniff\r\nConnection: close\r\n\r\n", body.len());
        let _ = stream.write_all(header.as_bytes());
        let _ = stream.write_all(body);
    }
    ExitCode::SUCCESS
}
