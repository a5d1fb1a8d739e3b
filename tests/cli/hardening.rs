//! Issue 9 (hardening): no panic on any stream, bounded memory on any
//! input, output paths that cannot be turned against the user. Each test
//! names the defect of the issue it guards.

use std::io::Write;
use std::path::Path;
use std::process::{Command, Stdio};

const BIN: &str = env!("CARGO_BIN_EXE_burnout");
const HEADER: &str = "id,burnout-alt,periapsis-alt,apoapsis-alt";

/// What a run gave: exit code, stdout and stderr as bytes.
struct Out {
    code: Option<i32>,
    stdout: Vec<u8>,
    stderr: String,
}

fn cmd(dir: &Path, args: &[&str]) -> Command {
    let mut c = Command::new(BIN);
    c.args(args)
        .current_dir(dir)
        .env("RUST_BACKTRACE", "1")
        .stdin(Stdio::null());
    c
}

fn output(mut c: Command) -> Out {
    let o = c.output().expect("run burnout");
    Out {
        code: o.status.code(),
        stdout: o.stdout,
        stderr: String::from_utf8_lossy(&o.stderr).into_owned(),
    }
}

fn run(dir: &Path, args: &[&str]) -> Out {
    output(cmd(dir, args))
}

/// Runs a bash command line with `$BIN` set; returns its stdout.
fn bash(dir: &Path, script: &str) -> String {
    let o = Command::new("bash")
        .arg("-c")
        .arg(script)
        .env("BIN", BIN)
        .current_dir(dir)
        .output()
        .expect("run bash");
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn dev_full() -> Stdio {
    Stdio::from(
        std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/full")
            .unwrap(),
    )
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn rows(bytes: &[u8]) -> Vec<Vec<String>> {
    csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(bytes)
        .records()
        .map(|r| r.unwrap().iter().map(str::to_string).collect())
        .collect()
}

fn write(dir: &Path, name: &str, bytes: &[u8]) {
    std::fs::write(dir.join(name), bytes).unwrap();
}

const SOLVE: [&str; 7] = [
    "solve",
    "--burnout-alt",
    "200",
    "--periapsis-alt",
    "185",
    "--apoapsis-alt",
    "35786",
];

// Defect 1: a diagnostic that cannot be written changes nothing.

#[test]
fn error_with_stderr_on_a_full_device_exits_2_without_a_panic() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = cmd(dir.path(), &["solve", "--burnout-alt", "x"]);
    c.stderr(dev_full());
    assert_eq!(output(c).code, Some(2));
}

#[test]
fn batch_with_stderr_on_a_full_device_still_writes_its_output() {
    let dir = tempfile::tempdir().unwrap();
    let input = format!("{HEADER},notes\na,200,185,35786,x\n");
    write(dir.path(), "small.csv", input.as_bytes());
    let mut c = cmd(dir.path(), &["batch", "small.csv", "--out", "b.csv"]);
    c.stderr(dev_full());
    assert_eq!(output(c).code, Some(0));
    let out = std::fs::read(dir.path().join("b.csv")).unwrap();
    assert_eq!(rows(&out)[1][5], "ok");
}

#[test]
fn batch_whose_stderr_pipe_is_closed_exits_quietly() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "small.csv",
        format!("{HEADER},notes\na,200,185,35786,x\n").as_bytes(),
    );
    let got = bash(
        dir.path(),
        "\"$BIN\" batch small.csv 2>&1 | head -c 1 >/dev/null; echo \"rc=${PIPESTATUS[0]}\"",
    );
    assert!(got.ends_with("rc=0\n"), "{got}");
}

// Defect 2: batch memory is bounded and a stray quote loses nothing silently.

#[test]
fn quoted_multi_line_record_over_the_cap_is_an_invalid_row() {
    let dir = tempfile::tempdir().unwrap();
    let mut input = format!("{HEADER}\na,200,185,35786\nbig,200,185,\"").into_bytes();
    for _ in 0..(3 << 14) {
        input.extend_from_slice(b"0123456789012345678901234567890123456789\n");
    }
    input.extend_from_slice(b"\"\nc,200,185,35786\n");
    write(dir.path(), "in.csv", &input);
    let r = run(dir.path(), &["batch", "in.csv"]);
    assert_eq!(r.code, Some(3), "{}", r.stderr);
    let out = rows(&r.stdout);
    // Two branches for a solved row, one row for the invalid one.
    let ids: Vec<&str> = out[1..].iter().map(|x| x[0].as_str()).collect();
    assert_eq!(ids, ["a", "a", "", "c", "c"]);
    assert_eq!(out[3][4], "invalid");
    assert!(out[3][5].starts_with("lines 3-"), "{}", out[3][5]);
    assert!(
        out[3][5].contains("longer than 1048576 bytes"),
        "{}",
        out[3][5]
    );
}

fn stray_quote_input() -> String {
    let mut input = format!("{HEADER}\n");
    for i in 0..100 {
        if i == 9 {
            input.push('"');
        }
        input.push_str(&format!("r{i},200,185,35786\n"));
    }
    input
}

#[test]
fn stray_quote_stops_the_batch_naming_its_line_and_says_stdout_is_incomplete() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "in.csv", stray_quote_input().as_bytes());
    let r = run(dir.path(), &["batch", "in.csv"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(r.stderr.contains("line 11: a quoted field"), "{}", r.stderr);
    assert!(
        r.stderr.contains("standard output is incomplete"),
        "{}",
        r.stderr
    );
    // The nine rows before the stray quote are there (two branches each).
    let out = rows(&r.stdout);
    assert_eq!(out.len(), 1 + 2 * 9);
    assert_eq!(out[18][0], "r8");
}

#[test]
fn stray_quote_with_out_leaves_no_file() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "in.csv", stray_quote_input().as_bytes());
    let r = run(dir.path(), &["batch", "in.csv", "--out", "o.csv"]);
    assert_eq!(r.code, Some(2));
    assert!(
        r.stderr.contains("nothing written to --out 'o.csv'"),
        "{}",
        r.stderr
    );
    assert_eq!(names(dir.path()), ["in.csv"]);
}

#[test]
fn header_wider_than_the_cap_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let header: Vec<String> = (0..1025).map(|i| format!("c{i}")).collect();
    write(
        dir.path(),
        "in.csv",
        format!("{}\n1\n", header.join(",")).as_bytes(),
    );
    let r = run(dir.path(), &["batch", "in.csv"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(
        r.stderr,
        "error: batch header has 1025 columns: expected at most 1024 ('in.csv')\n"
    );
}

// Defect 3: output collisions and symbolic links.

const SCAN: [&str; 7] = [
    "scan",
    "--burnout-alt",
    "190km..210km:10km",
    "--periapsis-alt",
    "185",
    "--apoapsis-alt",
    "35786",
];

#[test]
fn plot_naming_the_out_file_through_dot_dot_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("sub")).unwrap();
    write(dir.path(), "s3.csv", b"precious");
    let mut args = SCAN.to_vec();
    args.extend(["--out", "s3.csv", "--plot", "sub/../s3.csv", "--force"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("are the same file"), "{}", r.stderr);
    assert_eq!(
        std::fs::read(dir.path().join("s3.csv")).unwrap(),
        b"precious"
    );
    assert_eq!(names(dir.path()), ["s3.csv", "sub"]);
}

#[test]
fn plot_naming_the_out_file_through_a_link_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink(".", dir.path().join("here")).unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "s.csv", "--plot", "here/s.csv"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("are the same file"), "{}", r.stderr);
    assert_eq!(names(dir.path()), ["here"]);
}

#[test]
fn scan_out_naming_its_case_file_is_refused_even_with_force() {
    let dir = tempfile::tempdir().unwrap();
    let case = "[burnout]\nalt = \"190km..210km:10km\"\n[target]\nperiapsis-alt = 185\napoapsis-alt = 35786\n";
    write(dir.path(), "x.toml", case.as_bytes());
    let r = run(
        dir.path(),
        &[
            "scan", "--case", "x.toml", "--out", "./x.toml", "--force", "--format", "csv",
        ],
    );
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("is the case file"), "{}", r.stderr);
    assert_eq!(
        std::fs::read_to_string(dir.path().join("x.toml")).unwrap(),
        case
    );
}

#[test]
fn batch_out_naming_its_input_through_dot_dot_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("sub")).unwrap();
    let input = format!("{HEADER}\na,200,185,35786\n");
    write(dir.path(), "in.csv", input.as_bytes());
    let r = run(
        dir.path(),
        &["batch", "in.csv", "--out", "sub/../in.csv", "--force"],
    );
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("is the batch input"), "{}", r.stderr);
    assert_eq!(
        std::fs::read_to_string(dir.path().join("in.csv")).unwrap(),
        input
    );
}

#[test]
fn nothing_is_created_through_a_dangling_link_even_with_force() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink("elsewhere.csv", dir.path().join("out.csv")).unwrap();
    for force in [false, true] {
        let mut args = SCAN.to_vec();
        args.extend(["--out", "out.csv"]);
        if force {
            args.push("--force");
        }
        let r = run(dir.path(), &args);
        assert_eq!(r.code, Some(2));
        assert_eq!(r.stderr.lines().count(), 1);
        assert!(r.stderr.contains("dangling link"), "{}", r.stderr);
        assert_eq!(names(dir.path()), ["out.csv"]);
    }
}

#[test]
fn own_link_to_a_file_is_followed_with_force_and_kept() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "real.csv", b"old");
    std::os::unix::fs::symlink("real.csv", dir.path().join("out.csv")).unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "out.csv", "--force"]);
    assert_eq!(run(dir.path(), &args).code, Some(0));
    let meta = std::fs::symlink_metadata(dir.path().join("out.csv")).unwrap();
    assert!(meta.file_type().is_symlink());
    assert!(std::fs::read_to_string(dir.path().join("real.csv"))
        .unwrap()
        .starts_with("burnout_alt_m,"));
}

#[test]
fn symlink_loop_is_reported_as_a_loop() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink("b.csv", dir.path().join("a.csv")).unwrap();
    std::os::unix::fs::symlink("a.csv", dir.path().join("b.csv")).unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "a.csv", "--force"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("loop of symbolic links"), "{}", r.stderr);
}

// Defect 4: --force keeps the replaced file's mode.

#[test]
fn force_keeps_mode_0600() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out.csv");
    write(dir.path(), "out.csv", b"old");
    std::fs::set_permissions(&out, std::fs::Permissions::from_mode(0o600)).unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "out.csv", "--force"]);
    assert_eq!(run(dir.path(), &args).code, Some(0));
    let mode = std::fs::metadata(&out).unwrap().permissions().mode() & 0o7777;
    assert_eq!(mode, 0o600);
    assert_ne!(std::fs::read(&out).unwrap(), b"old");
}

// Defect 5: a signal mid-write leaves no temporary file.

#[test]
fn sigint_sigterm_and_sighup_mid_write_leave_no_temporary_file() {
    use std::os::unix::process::ExitStatusExt;
    for (name, number) in [("INT", 2), ("TERM", 15), ("HUP", 1)] {
        let dir = tempfile::tempdir().unwrap();
        let mut child = cmd(dir.path(), &["batch", "-", "--out", "out.csv"])
            .stdin(Stdio::piped())
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let mut stdin = child.stdin.take().unwrap();
        // Rows arrive; the input stays open, so the run is mid-write.
        writeln!(stdin, "{HEADER}\na,200,185,35786").unwrap();
        stdin.flush().unwrap();
        let started = std::time::Instant::now();
        while !names(dir.path()).iter().any(|n| n.starts_with(".out.csv.")) {
            assert!(
                started.elapsed().as_secs() < 20,
                "no temporary file appeared"
            );
            std::thread::sleep(std::time::Duration::from_millis(10));
        }
        let pid = child.id().to_string();
        let killed = Command::new("kill")
            .args([&format!("-{name}"), &pid])
            .status()
            .unwrap();
        assert!(killed.success());
        let status = child.wait().unwrap();
        drop(stdin);
        assert_eq!(status.signal(), Some(number), "SIG{name}: {status:?}");
        assert!(
            names(dir.path()).is_empty(),
            "SIG{name}: {:?}",
            names(dir.path())
        );
    }
}

// Defect 6: both files or neither; one stderr line on failure.

#[test]
fn failed_plot_leaves_no_out_file() {
    let dir = tempfile::tempdir().unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "s.csv", "--plot", "/dev/full"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(
        r.stderr.contains("cannot write --plot '/dev/full'"),
        "{}",
        r.stderr
    );
    assert!(names(dir.path()).is_empty(), "{:?}", names(dir.path()));
}

#[test]
fn failing_batch_with_a_warning_prints_only_its_error() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "in.csv",
        format!("{HEADER},notes\na,200,185,35786,x\n").as_bytes(),
    );
    let r = run(dir.path(), &["batch", "in.csv", "--out", "/dev/full"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(
        r.stderr.starts_with("error: cannot write --out"),
        "{}",
        r.stderr
    );
}

// Defect 8: case files are bounded and regular.

#[test]
fn case_from_a_device_or_over_the_cap_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let r = run(dir.path(), &["solve", "--case", "/dev/zero"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(
        r.stderr,
        "error: case file '/dev/zero' for --case is not a regular file: expected a TOML file\n"
    );
    let mut big = b"# padding\n".repeat(110_000);
    big.extend_from_slice(b"[burnout]\nalt = 200\n");
    write(dir.path(), "big.toml", &big);
    let r = run(dir.path(), &["solve", "--case", "big.toml"]);
    assert_eq!(r.code, Some(2));
    assert!(
        r.stderr.contains("expected at most 1048576 bytes"),
        "{}",
        r.stderr
    );
}

// Defect 9: no tool-written message cell starts like a formula; user cells
// are neutralised only on request.

#[test]
fn tool_messages_never_start_like_a_formula_and_safe_cells_guards_user_cells() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "in.csv",
        format!("{HEADER},fpa,zenith\n=HYPERLINK(\"x\"),200,185,35786,1,3\n").as_bytes(),
    );
    let plain = run(dir.path(), &["batch", "in.csv"]);
    let guarded = run(dir.path(), &["batch", "in.csv", "--safe-cells"]);
    for r in [&plain, &guarded] {
        assert_eq!(r.code, Some(3));
        let message = &rows(&r.stdout)[1][7];
        assert!(message.contains("--fpa and --zenith"), "{message}");
        assert!(!message.starts_with(['=', '+', '-', '@']), "{message}");
    }
    assert_eq!(rows(&plain.stdout)[1][0], "=HYPERLINK(\"x\")");
    assert_eq!(rows(&guarded.stdout)[1][0], "'=HYPERLINK(\"x\")");
    // Plain numbers stay numbers.
    assert_eq!(rows(&guarded.stdout)[1][4], "1");
}

// Defect 10: the small ones.

#[test]
fn closed_stdout_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let got = bash(
        dir.path(),
        "\"$BIN\" solve --burnout-alt 200 --periapsis-alt 185 --apoapsis-alt 35786 >&- 2>err; echo \"rc=$?\"; cat err",
    );
    assert!(
        got.starts_with("rc=2\nerror: standard output is closed"),
        "{got}"
    );
    // A user's own /dev/null is not a closed stream.
    let got = bash(dir.path(), "\"$BIN\" --version >/dev/null; echo \"rc=$?\"");
    assert_eq!(got, "rc=0\n");
}

#[test]
fn help_to_a_full_device_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = cmd(dir.path(), &["--help"]);
    c.stdout(dev_full());
    let r = output(c);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(
        r.stderr.contains("cannot write to standard output"),
        "{}",
        r.stderr
    );
}

#[test]
fn out_name_of_254_characters_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let name = format!("{}.csv", "n".repeat(250));
    let mut args = SCAN.to_vec();
    args.extend(["--out", &name]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_eq!(names(dir.path()), [name]);
}

#[test]
fn out_dash_is_standard_output() {
    let dir = tempfile::tempdir().unwrap();
    let mut args = SCAN.to_vec();
    args.extend(["--out", "-", "--format", "csv"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert_eq!(rows(&r.stdout).len(), 7);
    write(
        dir.path(),
        "in.csv",
        format!("{HEADER}\na,200,185,35786\n").as_bytes(),
    );
    let r = run(dir.path(), &["batch", "in.csv", "--out", "-"]);
    assert_eq!(r.code, Some(0));
    assert_eq!(rows(&r.stdout).len(), 3);
    assert_eq!(names(dir.path()), ["in.csv"]);
}

#[test]
fn control_bytes_from_the_input_are_escaped_on_stderr() {
    let dir = tempfile::tempdir().unwrap();
    let r = run(dir.path(), &["solve", "--burnout-alt", "\u{1b}[2J\r9\u{7}"]);
    assert_eq!(r.code, Some(2));
    assert!(
        !r.stderr.bytes().any(|b| b < 0x20 && b != b'\n'),
        "{:?}",
        r.stderr
    );
    assert!(r.stderr.contains("\\x1b[2J\\r9\\x07"), "{}", r.stderr);
}

#[test]
fn invalid_utf8_id_is_kept_as_read() {
    let dir = tempfile::tempdir().unwrap();
    let mut input = format!("{HEADER}\n").into_bytes();
    input.extend_from_slice(b"r\xff\xfe1,200,185,35786\n");
    write(dir.path(), "in.csv", &input);
    let r = run(dir.path(), &["batch", "in.csv"]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let line = r.stdout.split(|&b| b == b'\n').nth(1).unwrap();
    assert!(line.starts_with(b"r\xff\xfe1,200,"), "{:?}", line);
}

#[test]
fn solve_still_works_with_every_stream_normal() {
    let dir = tempfile::tempdir().unwrap();
    assert_eq!(run(dir.path(), &SOLVE).code, Some(0));
}

#[test]
fn range_messages_blame_the_part_at_fault() {
    let dir = tempfile::tempdir().unwrap();
    for (range, want) in [
        ("150..600:nan", "step 'nan' is not a finite number"),
        (
            "0..3e9:1",
            "3000000001 points is more than the limit 1000000000",
        ),
    ] {
        let r = run(
            dir.path(),
            &[
                "scan",
                "--burnout-alt",
                range,
                "--periapsis-alt",
                "185",
                "--apoapsis-alt",
                "35786",
            ],
        );
        assert_eq!(r.code, Some(2));
        assert!(r.stderr.contains(want), "{range}: {}", r.stderr);
    }
    let r = run(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "1e17..1e17:1",
            "--periapsis-alt",
            "185",
            "--apoapsis-alt",
            "35786",
        ],
    );
    assert_eq!(r.code, Some(2));
    assert!(!r.stderr.contains("is a time"), "{}", r.stderr);
}

// Defect 7 (the budget's part): tolerances too small for finite axes.

#[test]
fn budget_tolerance_too_small_for_finite_axes_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let mut args = vec!["budget"];
    args.extend_from_slice(&SOLVE[1..]);
    args.extend(["--periapsis-tol", "1e-300", "--apoapsis-tol", "1e-300"]);
    let r = run(dir.path(), &args);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(
        r.stderr.starts_with("error: --periapsis-tol '1e-300'"),
        "{}",
        r.stderr
    );
    assert!(
        r.stderr.contains("expected 0 or at least 1e-150"),
        "{}",
        r.stderr
    );
}
