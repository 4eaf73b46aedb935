//! Running the built binary, shared by every CLI test module.

#![allow(
    dead_code,
    reason = "each test module uses a different subset of the helpers"
)]

use std::path::Path;
use std::process::{Command, Stdio};

/// What one run of the binary produced.
#[derive(Debug)]
pub struct Run {
    /// Standard output, as text.
    pub stdout: String,
    /// Standard error, as text.
    pub stderr: String,
    /// The exit code; `None` if the process was ended by a signal.
    pub code: Option<i32>,
}

/// Runs `lingrav` with `args` in the crate's root directory and returns
/// `(stdout, stderr, exit code)`. A run ended by a signal fails the test.
pub fn lingrav(args: &[&str]) -> (String, String, i32) {
    lingrav_in(Path::new(env!("CARGO_MANIFEST_DIR")), args)
}

/// Like [`lingrav`], with `dir` as the working directory (for relative file arguments).
pub fn lingrav_in(dir: &Path, args: &[&str]) -> (String, String, i32) {
    let r = run(dir, args);
    let code = r.code.unwrap_or_else(|| {
        panic!(
            "lingrav {args:?} was ended by a signal\nstderr:\n{}",
            r.stderr
        )
    });
    (r.stdout, r.stderr, code)
}

/// The full result of a run, for tests that care how the process ended.
pub fn run(dir: &Path, args: &[&str]) -> Run {
    let out = command(dir, args)
        .stdin(Stdio::null())
        .output()
        .unwrap_or_else(|e| panic!("cannot run lingrav {args:?}: {e}"));
    Run {
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        code: out.status.code(),
    }
}

/// The command for `lingrav args` in `dir`, with a plain environment for diagnostics: no
/// colours and a fixed width, so output does not depend on the terminal running the tests.
pub fn command(dir: &Path, args: &[&str]) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_lingrav"));
    c.args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .env("COLUMNS", "100")
        .env_remove("CLICOLOR_FORCE")
        .env_remove("FORCE_COLOR");
    c
}

/// Asserts that a run was clean: exit `code`, nothing on standard error, no panic.
pub fn assert_clean(args: &[&str], (stdout, stderr, got): &(String, String, i32), code: i32) {
    assert_eq!(
        *got, code,
        "lingrav {args:?}: exit {got}, expected {code}\nstdout:\n{stdout}\nstderr:\n{stderr}"
    );
    assert!(
        stderr.is_empty(),
        "lingrav {args:?} wrote to stderr:\n{stderr}"
    );
}

/// The Python interpreter of the outside checks: `LINGRAV_PYTHON`, default `python3`.
pub fn python() -> String {
    std::env::var("LINGRAV_PYTHON").unwrap_or_else(|_| "python3".into())
}

/// True under CI (`CI` set and not `false`/`0`), where a missing reference library fails the
/// outside checks instead of skipping them.
pub fn in_ci() -> bool {
    std::env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0")
}

/// Why `python` cannot import `modules` (comma-separated, e.g. `"sympy, mpmath"`), or `None`.
pub fn python_missing(python: &str, modules: &str) -> Option<String> {
    match Command::new(python)
        .args(["-c", &format!("import {modules}")])
        .output()
    {
        Err(e) => Some(format!("cannot run `{python}`: {e}")),
        Ok(out) if !out.status.success() => Some(format!(
            "`{python}` cannot import {modules}: {}",
            String::from_utf8_lossy(&out.stderr)
                .lines()
                .last()
                .unwrap_or("")
        )),
        Ok(_) => None,
    }
}

/// A seed (decimal or `0x` hex) from the environment variable `name`, if set.
///
/// # Panics
///
/// If the variable is set but is not a number: a rerun must use the seed it names.
pub fn env_u64(name: &str) -> Option<u64> {
    let s = std::env::var(name).ok()?;
    let s = s.trim();
    let parsed = match s.strip_prefix("0x") {
        Some(hex) => u64::from_str_radix(hex, 16),
        None => s.parse(),
    };
    Some(parsed.unwrap_or_else(|_| panic!("{name}={s:?} is not a number")))
}

/// The path of `worked/<name>`, as text for a command line.
pub fn worked(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("worked")
        .join(name)
        .display()
        .to_string()
}

/// The names of the entries of `dir`, sorted.
pub fn files_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// A rendered error as one line: words joined by single spaces, without the frame's bars, so
/// that a test does not depend on the width the message was wrapped to.
pub fn one_line(err: &str) -> String {
    let words: Vec<&str> = err
        .split_whitespace()
        .filter(|w| *w != "\u{2502}")
        .collect();
    words.join(" ")
}

/// CRC-32 (ISO-HDLC: reflected polynomial 0xedb88320, initial value and final xor all ones),
/// as the sidecar records it, bit by bit from the definition: a route independent of the
/// library's table-driven and carry-less-multiplication code.
pub fn crc32(bytes: &[u8]) -> String {
    let mut c: u32 = !0;
    for &b in bytes {
        c ^= u32::from(b);
        for _ in 0..8 {
            c = if c & 1 == 1 {
                (c >> 1) ^ 0xedb8_8320
            } else {
                c >> 1
            };
        }
    }
    format!("crc32:{:08x}", !c)
}

/// Runs an outside-check script (`script`, a path under the crate root) with `args` under
/// [`python`], after checking that Python imports `modules`. Outside CI a missing Python or
/// library skips the check (says so, returns `None`); under CI it is a failure. The script's
/// output is echoed, it must exit 0, and its standard output is returned for the caller's
/// own assertions. `what` names the check in messages.
pub fn outside_check(
    what: &str,
    modules: &str,
    script: &str,
    args: &[&std::ffi::OsStr],
) -> Option<String> {
    let python = python();
    if let Some(why) = python_missing(&python, modules) {
        let pip = modules.replace(',', "");
        assert!(
            !in_ci(),
            "CI is set, so the {what} must run, but {why} (pip install {pip})"
        );
        println!("skipped: {what}: {why}");
        return None;
    }
    let out = Command::new(&python)
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join(script))
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("run the {what} ({script}): {e}"));
    let stdout = String::from_utf8_lossy(&out.stdout).into_owned();
    print!("{stdout}");
    eprint!("{}", String::from_utf8_lossy(&out.stderr));
    assert!(
        out.status.success(),
        "the {what} failed: see its output above"
    );
    Some(stdout)
}

/// Writes `records` to `path`, one JSON value per line (the outside checks' case files).
pub fn write_jsonl(path: &Path, records: &[serde_json::Value]) {
    use std::io::Write as _;
    let mut file = std::io::BufWriter::new(std::fs::File::create(path).expect("create"));
    for r in records {
        writeln!(file, "{r}").expect("write the cases");
    }
    file.flush().expect("write the cases");
}
