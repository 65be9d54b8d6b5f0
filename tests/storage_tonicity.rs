//! Tonicity stored with readings: what the daemon assesses comes back from the database unchanged, for an
//! osmoregulator and an osmoconformer, and readings without a species come back without tonicity.
mod storage_support;

use halotank::seawater::derive_from_salinity;
use halotank::species::{assess, SpeciesLibrary};
use halotank::storage::{spawn_writer, Reader, WriteItem, WriterSettings};
use storage_support::{at, reading, temp_db};

#[test]
fn tonicity_round_trips_through_the_readings_table() {
    let library = SpeciesLibrary::embedded().unwrap();
    let db = temp_db();
    let (writer, _reports, join) = spawn_writer::<()>(&db.path, WriterSettings::default()).unwrap();
    let mut rows = Vec::new();
    for (i, (tank, species)) in [
        ("smolt-a1", Some("atlantic_salmon_smolt")),
        ("oyster-c1", Some("pacific_oyster")),
        ("spare-d1", None),
    ]
    .into_iter()
    .enumerate()
    {
        let mut row = reading(tank, at(2024, 5, 14, 6, 0, i as u32));
        // Consistent derived values for SP 20 at the row's temperature and pressure.
        row.derived = derive_from_salinity(20.0, row.temperature_c, row.pressure_dbar, 0.0).unwrap();
        row.tonicity = species.map(|id| {
            assess(
                &row.derived,
                row.temperature_c,
                row.pressure_dbar,
                library.get(id).unwrap(),
            )
            .unwrap()
        });
        rows.push(row);
    }
    writer
        .blocking_send(WriteItem::Readings(rows.clone(), ()))
        .unwrap();
    writer.blocking_flush().unwrap();
    drop(writer);
    join.join().unwrap().unwrap();

    let reader = Reader::open(&db.path).unwrap();
    let mut latest = reader.latest_per_tank().unwrap();
    latest.sort_by_key(|r| r.time);
    assert_eq!(latest, rows);
    assert!(latest[0].tonicity.as_ref().unwrap().tonicity.is_some());
    assert!(latest[1].tonicity.as_ref().unwrap().tonicity.is_none());
    assert!(latest[2].tonicity.is_none());

    // `halotank status` shows it, in text and JSON.
    let args = halotank::cli::status::StatusArgs {
        db: db.path.clone(),
        format: halotank::cli::status::StatusFormat::Json,
    };
    let report = halotank::cli::status::build_report(&args, at(2024, 5, 14, 7, 0, 0)).unwrap();
    let text = halotank::cli::status::render_text(&report);
    let smolt_message = &rows[0].tonicity.as_ref().unwrap().message;
    assert!(
        text.contains(&format!("tonicity (atlantic_salmon_smolt): {smolt_message}")),
        "{text}"
    );
    let json = serde_json::to_value(&report).unwrap();
    let tanks = json["tanks"].as_array().unwrap();
    let smolt = tanks.iter().find(|t| t["tank_id"] == "smolt-a1").unwrap();
    assert_eq!(smolt["latest"]["tonicity"]["species"], "atlantic_salmon_smolt");
    assert!(smolt["latest"]["tonicity"]["gradient_mOsm_kg"].is_number());
    let spare = tanks.iter().find(|t| t["tank_id"] == "spare-d1").unwrap();
    assert!(spare["latest"]["tonicity"].is_null());
}
