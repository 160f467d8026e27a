//! The real binary: `serve` answers `/healthz`; `calc` speaks the API's JSON.

use std::io::{BufRead, BufReader, Read, Write};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn binary() -> &'static str {
    env!("CARGO_BIN_EXE_glasspoint")
}

#[test]
fn serve_on_a_free_port_answers_healthz() {
    let dir = tempfile::tempdir().unwrap();
    let db = format!("sqlite://{}", dir.path().join("bin.db").display());
    let mut child = Command::new(binary())
        .args(["serve", "--bind", "127.0.0.1:0", "--database", &db])
        .current_dir(dir.path())
        .stderr(Stdio::piped())
        .stdout(Stdio::null())
        .spawn()
        .expect("start glasspoint serve");
    let stderr = child.stderr.take().unwrap();
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        for line in BufReader::new(stderr).lines().map_while(Result::ok) {
            if let Some(addr) = line.split("listening on http://").nth(1) {
                let _ = tx.send(addr.trim().to_string());
            }
        }
    });
    let addr = rx
        .recv_timeout(Duration::from_secs(60))
        .expect("the server says where it listens");
    let deadline = Instant::now() + Duration::from_secs(20);
    let reply = loop {
        match std::net::TcpStream::connect(&addr) {
            Ok(mut s) => {
                s.write_all(
                    format!("GET /healthz HTTP/1.1\r\nHost: {addr}\r\nConnection: close\r\n\r\n")
                        .as_bytes(),
                )
                .unwrap();
                let mut out = String::new();
                s.read_to_string(&mut out).unwrap();
                break out;
            }
            Err(_) if Instant::now() < deadline => std::thread::sleep(Duration::from_millis(100)),
            Err(e) => panic!("cannot connect: {e}"),
        }
    };
    let _ = child.kill();
    let _ = child.wait();
    assert!(reply.starts_with("HTTP/1.1 200"), "{reply}");
}

pub fn calc(topic: &str, input: &str) -> (i32, String, String) {
    let mut child = Command::new(binary())
        .args(["calc", topic])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(input.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn calc_answers_json_and_refuses_bad_input_with_status_2_naming_the_field() {
    let (code, out, _) = calc("ice-vapor-pressure", r#"{"temperature_c": -30}"#);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    // Murphy & Koop (2005) eq. 7 at −30 °C: 38.0 Pa (IAPWS 2011 agrees within 0.1 %).
    assert!(
        (v["pressure_pa"].as_f64().unwrap() - 38.0).abs() < 0.2,
        "{v}"
    );
    let (code, _, err) = calc("ice-vapor-pressure", r#"{"temperature_c": 20}"#);
    assert_eq!(code, 2);
    assert!(err.contains("temperature_c"), "{err}");
    let (code, _, err) = calc("ice-vapor-pressure", r#"{}"#);
    assert_eq!(code, 2);
    assert!(err.contains("temperature_c"), "{err}");
    let (code, _, err) = calc("ice-vapor-pressure", "not json");
    assert_eq!(code, 2, "{err}");
    let (code, _, err) = calc("no-such-topic", "{}");
    assert_eq!(code, 2);
    assert!(err.contains("topic"), "{err}");
}

#[test]
fn backup_writes_a_new_file_refuses_an_existing_one_and_points_postgres_to_pg_dump() {
    let dir = tempfile::tempdir().unwrap();
    let db = format!("sqlite://{}", dir.path().join("live.db").display());
    let migrate = Command::new(binary())
        .args(["migrate", "--database", &db])
        .output()
        .unwrap();
    assert!(migrate.status.success(), "{migrate:?}");
    let copy = dir.path().join("copy.db");
    let copy_arg = copy.display().to_string();
    let first = Command::new(binary())
        .args(["backup", &copy_arg, "--database", &db])
        .output()
        .unwrap();
    assert!(first.status.success(), "{first:?}");
    assert!(copy.metadata().unwrap().len() > 0);

    let again = Command::new(binary())
        .args(["backup", &copy_arg, "--database", &db])
        .output()
        .unwrap();
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("already exists"));

    let missing = Command::new(binary())
        .args([
            "backup",
            &dir.path().join("other.db").display().to_string(),
            "--database",
            &format!("sqlite://{}", dir.path().join("nope.db").display()),
        ])
        .output()
        .unwrap();
    assert!(!missing.status.success());
    assert!(
        !dir.path().join("nope.db").exists(),
        "a missing database is not created"
    );

    let pg = Command::new(binary())
        .args([
            "backup",
            &dir.path().join("pg.db").display().to_string(),
            "--database",
            "postgres://nobody@127.0.0.1:1/none",
        ])
        .output()
        .unwrap();
    assert!(!pg.status.success());
    assert!(String::from_utf8_lossy(&pg.stderr).contains("pg_dump"));
}

#[test]
fn dryer_list_shows_the_shipped_typical_dryer_marked_as_typical() {
    let dir = tempfile::tempdir().unwrap();
    let db = format!("sqlite://{}", dir.path().join("d.db").display());
    let out = Command::new(binary())
        .args(["dryer", "list", "--database", &db])
        .output()
        .expect("run glasspoint dryer list");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("Typical laboratory dryer (typical values: replace with your own)"),
        "{text}"
    );
    assert!(text.contains("100 mTorr → 1 kg/h"), "{text}");
}

/// Runs `glasspoint ARGS` with `stdin` as standard input (not a terminal).
fn run_with_stdin(args: &[&str], stdin: &str) -> (i32, String, String) {
    let mut child = Command::new(binary())
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run glasspoint");
    child
        .stdin
        .take()
        .unwrap()
        .write_all(stdin.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn accounts_are_managed_on_the_console_with_passwords_from_standard_input() {
    let dir = tempfile::tempdir().unwrap();
    let db = format!("sqlite://{}", dir.path().join("users.db").display());
    let db = db.as_str();
    // A password and its identical confirmation on the second line.
    let (code, _, err) = run_with_stdin(
        &[
            "user",
            "add",
            "ada",
            "--role",
            "admin",
            "--full-name",
            "Ada Example",
            "--database",
            db,
        ],
        "a long enough password\na long enough password\n",
    );
    assert_eq!(code, 0, "{err}");
    // A confirmation that differs is refused, naming the field; nothing is created.
    let (code, _, err) = run_with_stdin(
        &["user", "add", "bob", "--role", "reader", "--database", db],
        "first password here\nsecond password here\n",
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("password"), "{err}");
    // Too short, and an unknown role: exit 2 naming what is wrong.
    let (code, _, err) = run_with_stdin(
        &["user", "add", "cy", "--role", "reader", "--database", db],
        "short\n",
    );
    assert_eq!(code, 2);
    assert!(
        err.contains("password") && err.contains("at least"),
        "{err}"
    );
    let (code, _, err) = run_with_stdin(
        &["user", "add", "cy", "--role", "boss", "--database", db],
        "a long enough password\n",
    );
    assert_eq!(code, 2);
    assert!(err.contains("--role"), "{err}");
    let (code, out, _) = run_with_stdin(&["user", "list", "--database", db], "");
    assert_eq!(code, 0);
    assert!(out.contains("ada\tadmin\tactive\tAda Example"), "{out}");
    assert!(!out.contains("bob"), "the refused account was not created");
    // A token is printed once, on standard output.
    let (code, out, _) = run_with_stdin(
        &["user", "token", "ada", "--scope", "read", "--database", db],
        "",
    );
    assert_eq!(code, 0);
    assert!(
        out.trim().starts_with("gpt_") && out.trim().len() > 40,
        "{out}"
    );
    let (code, _, _) = run_with_stdin(
        &["user", "passwd", "ada", "--database", db],
        "another long password\n",
    );
    assert_eq!(code, 0);
    let (code, _, _) = run_with_stdin(&["user", "disable", "ada", "--database", db], "");
    assert_eq!(code, 0);
    let (_, out, _) = run_with_stdin(&["user", "list", "--database", db], "");
    assert!(out.contains("ada\tadmin\tdisabled"), "{out}");
    // Every one of those changes is in the audit trail, attributed to the console.
    let (code, out, _) = run_with_stdin(&["audit", "verify", "--database", db], "");
    assert_eq!(code, 0, "{out}");
}
