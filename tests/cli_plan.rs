//! `halotank plan` run as the built binary: JSON shape, CSV, the SVG chart, infeasible plans and bad input.
use std::process::{Command, Output};

use serde_json::Value;

fn halotank(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(args)
        .output()
        .unwrap()
}

fn json(output: &Output) -> Value {
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    serde_json::from_slice(&output.stdout).unwrap()
}

const EXCHANGE: &[&str] = &[
    "plan",
    "--volume",
    "2000",
    "--from",
    "5",
    "--to",
    "30",
    "--temperature",
    "12",
    "--method",
    "exchange",
    "--source-salinity",
    "34",
    "--interval",
    "2h",
    "--max-rate",
    "2/h",
    "--hold",
    "12@12h",
    "--optimum",
    "8-30",
    "--tolerance",
    "0-28",
    "--start",
    "2031-05-14T06:00:00Z",
];

#[test]
fn exchange_plan_json_has_the_documented_keys() {
    let mut args = EXCHANGE.to_vec();
    args.extend(["--format", "json"]);
    let v = json(&halotank(&args));
    let steps = v["steps"].as_array().unwrap();
    assert!(!steps.is_empty());
    for step in steps {
        assert!(step["time"].as_str().unwrap().starts_with("2031-05-1"));
        assert!(step["setpoint_practical_salinity"].is_f64());
        assert!(step["setpoint_osmolality_mOsm_kg"].is_f64());
        assert!(step["drain_L"].is_f64() && step["add_L"].is_f64());
        assert!(step.get("flow_L_min").is_none() && step.get("salt_kg").is_none());
    }
    assert_eq!(steps[0]["time"], "2031-05-14T06:00:00Z");
    assert_eq!(steps.last().unwrap()["setpoint_practical_salinity"], 30.0);
    assert!(steps
        .iter()
        .any(|s| s["kind"] == "hold" && s["setpoint_practical_salinity"] == 12.0));
    // At 2 SP/h in 2 h steps: 5 → 9 → 12 (stopped at the hold), 12 h at 12, then 16, 20, 24, 28, 30:
    // 7 changes of 2 h and the 12 h hold make 26 h (worked by hand).
    assert_eq!(v["total_duration_h"], 26.0);
    let warnings = v["warnings"].as_array().unwrap();
    assert!(
        warnings.iter().any(|w| w["code"] == "target_outside_tolerance"),
        "{warnings:?}"
    );
    assert!(v["caution"].as_str().unwrap().contains("calibrated meter"));
}

#[test]
fn flow_and_salt_plans_carry_their_own_quantities() {
    let flow = json(&halotank(&[
        "plan",
        "--volume",
        "2000",
        "--from",
        "5",
        "--to",
        "30",
        "--temperature",
        "12",
        "--method",
        "flow",
        "--source-salinity",
        "34",
        "--max-flow",
        "40",
        "--interval",
        "1h",
        "--shape",
        "osmolality",
        "--max-rate",
        "1/h",
        "--format",
        "json",
    ]));
    for step in flow["steps"].as_array().unwrap() {
        assert!(step["flow_L_min"].as_f64().unwrap() > 0.0);
        assert!(step.get("drain_L").is_none());
    }
    let salt = json(&halotank(&[
        "plan",
        "--volume",
        "500",
        "--from",
        "10",
        "--to",
        "20",
        "--temperature",
        "15",
        "--method",
        "salt",
        "--interval",
        "1h",
        "--max-rate",
        "3/h",
        "--format",
        "json",
    ]));
    let steps = salt["steps"].as_array().unwrap();
    assert!(steps.iter().all(|s| s["salt_kg"].as_f64().unwrap() > 0.0));
    // The tank's own salt rises from 500 L at SP 10 to 500 L at SP 20, at 15 °C (ρ ≈ 1006.7 and 1014.3 kg/m³,
    // EOS-80 from memory; SA = 1.0047·SP g/kg): 500·1.0143·0.020094 − 500·1.0067·0.010047 = 5.13 kg, worked by
    // hand. The salt also replaces what the drained water carries off, at most about 0.0204 kg/L (SP 20).
    let total = salt["totals"]["salt_kg"].as_f64().unwrap();
    let drained = salt["totals"]["drain_L"].as_f64().unwrap();
    assert!(
        total > 5.10 && total < 5.16 + drained * 0.0204,
        "{total} kg, {drained} L drained"
    );
    let blend = json(&halotank(&[
        "plan",
        "--method",
        "blend",
        "--to",
        "18",
        "--temperature",
        "12",
        "--source-a",
        "0.4",
        "--source-b",
        "34",
        "--batch-volume",
        "300",
        "--format",
        "json",
    ]));
    let (a, b) = (
        blend["source_a_L"].as_f64().unwrap(),
        blend["source_b_L"].as_f64().unwrap(),
    );
    assert!((a + b - 300.0).abs() < 1.0 && a > 0.0 && b > 0.0);
}

#[test]
fn chart_is_written_as_svg() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("plan.svg");
    let mut args = EXCHANGE.to_vec();
    args.extend(["--chart", path.to_str().unwrap()]);
    let out = halotank(&args);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let svg = std::fs::read_to_string(&path).unwrap();
    assert!(svg.contains("<svg"));
    assert!(svg.contains("practical salinity") && svg.contains("osmolality"));
    assert!(svg.contains("optimum SP 8 to 30"));
}

#[test]
fn csv_has_a_header_and_one_row_per_step() {
    let mut args = EXCHANGE.to_vec();
    args.extend(["--format", "csv"]);
    let out = halotank(&args);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    let mut lines = text.lines();
    assert!(lines.next().unwrap().starts_with("step,time,duration_h,kind,"));
    assert_eq!(lines.count(), 8);
    assert!(String::from_utf8_lossy(&out.stderr).contains("caution:"));
}

#[test]
fn infeasible_and_bad_plans_fail_with_a_reason() {
    let out = halotank(&[
        "plan",
        "--volume",
        "2000",
        "--from",
        "5",
        "--to",
        "30",
        "--temperature",
        "12",
        "--method",
        "flow",
        "--source-salinity",
        "34",
        "--max-flow",
        "2",
        "--max-rate",
        "1/h",
    ]);
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("L/min") && err.contains("What would work"), "{err}");
    let out = halotank(&[
        "plan",
        "--volume",
        "2000",
        "--from",
        "5",
        "--to",
        "30",
        "--temperature",
        "12",
        "--method",
        "flow",
        "--source-salinity",
        "28",
        "--max-rate",
        "1/h",
    ]);
    assert!(String::from_utf8_lossy(&out.stderr).contains("above SP 30"));
    let out = halotank(&[
        "plan",
        "--volume",
        "2000",
        "--from",
        "5",
        "--to",
        "30",
        "--temperature",
        "12",
        "--source-salinity",
        "34",
        "--max-rate",
        "2",
    ]);
    assert_eq!(out.status.code(), Some(2), "clap refuses a rate without /h");
    let out = halotank(&["plan", "--help"]);
    let help = String::from_utf8_lossy(&out.stdout);
    assert!(help.contains("Examples") && help.contains("--species ID"));
}
