//! `halotank demo` as a user runs it: a short run exits 0 and says where its database is and how to
//! read it; `--help` shows an example; a bad duration is a usage error.
use std::process::Command;

fn halotank() -> Command {
    Command::new(env!("CARGO_BIN_EXE_halotank"))
}

#[test]
fn a_short_demo_runs_and_exits_0() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("demo.db");
    let out = halotank()
        .args(["demo", "--duration", "2s", "--speed", "600", "--db"])
        .arg(&db)
        .current_dir(dir.path())
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        out.status.success(),
        "status {:?}\n{stdout}\n{stderr}",
        out.status
    );
    assert!(stdout.contains("Brannock Sound Hatchery"), "{stdout}");
    for tank in [
        "parr-a",
        "smolt-t1",
        "shrimp-n2",
        "sea-hold-4",
        "oyster-d1",
        "quarantine-q1",
    ] {
        assert!(stdout.contains(tank), "{tank}\n{stdout}");
    }
    assert!(
        stdout.contains("does not replace a tank's own life-support alarm"),
        "{stdout}"
    );
    assert!(stdout.contains("Stopped: the duration has passed."), "{stdout}");
    assert!(stdout.contains("page and API: http://127.0.0.1:"), "{stdout}");
    let db_text = db.display().to_string();
    assert!(stdout.contains(&format!("Database: {db_text}")), "{stdout}");
    assert!(stdout.contains("halotank status --db "), "{stdout}");
    assert!(stdout.contains("halotank history --db "), "{stdout}");
    // The probes published and the broker acked everything.
    let probes = stdout.lines().find(|l| l.starts_with("Probes: ")).unwrap();
    let words: Vec<&str> = probes.split_whitespace().collect();
    let sent: u64 = words[1].parse().unwrap();
    assert!(sent > 0, "{probes}");
    assert!(probes.contains(&format!("{sent} acknowledged")), "{probes}");
}

#[test]
fn help_shows_an_example_and_bad_durations_are_usage_errors() {
    let out = halotank().args(["demo", "--help"]).output().unwrap();
    let help = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success());
    assert!(help.contains("halotank demo --duration 30s"), "{help}");
    assert!(help.contains("--speed"), "{help}");
    for bad in ["0s", "30", "5x"] {
        let out = halotank().args(["demo", "--duration", bad]).output().unwrap();
        assert_eq!(out.status.code(), Some(2), "{bad}");
    }
}
