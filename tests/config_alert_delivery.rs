//! `[alerts.delivery]` in the configuration: parsed into delivery settings, bad values located.
use std::path::Path;

use halotank::config;

fn example_with(extra: &str) -> String {
    format!("{}\n{extra}", include_str!("../config/halotank.toml"))
}

#[test]
fn webhook_and_exec_delivery_are_read_from_the_alerts_table() {
    let text = example_with(
        "[alerts.delivery.webhook]\nurl = \"http://127.0.0.1:9/hook\"\ntimeout_s = 3\n\n\
         [alerts.delivery.exec]\nprogram = \"/usr/local/bin/page-duty-staff\"\nargs = [\"--site\", \"brannock\"]\n",
    );
    let config = config::parse(&text, Path::new("halotank.toml")).unwrap();
    let delivery = config.alerts.delivery.expect("delivery settings");
    let webhook = delivery.webhook.expect("webhook");
    assert_eq!(webhook.url, "http://127.0.0.1:9/hook");
    assert_eq!(webhook.timeout_s, 3.0);
    let exec = delivery.exec.expect("exec");
    assert_eq!(exec.args, ["--site", "brannock"]);
}

#[test]
fn no_delivery_section_means_no_delivery() {
    let config = config::parse(
        include_str!("../config/halotank.toml"),
        Path::new("halotank.toml"),
    )
    .unwrap();
    assert!(config.alerts.delivery.is_none());
}

#[test]
fn a_bad_delivery_setting_names_its_key() {
    let text =
        example_with("[alerts.delivery.webhook]\nurl = \"http://127.0.0.1:9/hook\"\ncolour = \"red\"\n");
    let err = config::parse(&text, Path::new("halotank.toml"))
        .unwrap_err()
        .to_string();
    assert!(err.contains("alerts.delivery"), "{err}");
}
