//! EOS-80 density and the UNESCO 1983 freezing point checked against Python `seawater` 3.3.5 (PyPI), the
//! EOS-80 reference library; values stored in tests/data/eos80_reference.csv by make_eos80_reference.py.
use halotank::seawater::eos80_density::density_eos80;
use halotank::seawater::freezing_point::freezing_point_unesco1983;

/// (SP, t ITS-90 °C, p dbar, density kg/m³, freezing point ITS-90 °C) rows of the stored reference.
fn reference_rows() -> Vec<[f64; 5]> {
    let text = include_str!("data/eos80_reference.csv");
    text.lines()
        .skip(1)
        .map(|line| {
            let mut row = [0.0; 5];
            for (slot, field) in row.iter_mut().zip(line.split(',')) {
                *slot = field.trim().parse().unwrap();
            }
            row
        })
        .collect()
}

#[test]
fn density_agrees_with_python_seawater() {
    // Same published equations in both; 1e-9 kg/m³ leaves room only for rounding (ρ ~ 1e3, eps ~ 2e-13).
    let rows = reference_rows();
    assert_eq!(rows.len(), 693);
    for [sp, t, p, rho, _] in rows {
        let ours = density_eos80(sp, t, p).unwrap();
        assert!(
            (ours - rho).abs() <= 1e-9,
            "SP {sp} t {t} p {p}: ours {ours}, seawater {rho}"
        );
    }
}

#[test]
fn freezing_point_agrees_with_python_seawater() {
    for [sp, _, p, _, tf] in reference_rows() {
        let ours = freezing_point_unesco1983(sp, p).unwrap();
        assert!(
            (ours - tf).abs() <= 1e-12,
            "SP {sp} p {p}: ours {ours}, seawater {tf}"
        );
    }
}
