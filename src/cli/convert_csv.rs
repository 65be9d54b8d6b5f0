//! Bulk conversion of CSV readings (`halotank convert --csv`): one output row per input row, bad rows reported.
use std::io::{Read, Write};

use anyhow::{bail, Context};

use crate::seawater::derive::{derive_from_conductivity, Derived};
use crate::seawater::units::ProbeMode;

/// The input header: conductivity (mS/cm as the probe reports it), temperature, optional sea pressure.
pub const INPUT_COLUMNS: [&str; 3] = ["conductivity_mS_cm", "temperature_C", "pressure_dbar"];

/// The derived columns appended to each row, named as the JSON keys of `convert`.
pub const OUTPUT_COLUMNS: [&str; 6] = [
    "practical_salinity",
    "absolute_salinity_g_kg",
    "density_kg_m3",
    "osmolality_mOsm_kg",
    "osmotic_pressure_bar",
    "freezing_point_C",
];

/// How the conductivity column is to be read.
#[derive(Debug, Clone, Copy)]
pub struct CsvOptions {
    pub probe_mode: ProbeMode,
}

/// Counts of converted and refused rows.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct CsvSummary {
    pub good_rows: u64,
    pub bad_rows: u64,
}

/// Converts CSV from `input` to `output`; each bad row gets a message naming its line on `errors`
/// and an empty result row. Only an unusable header or an I/O failure stops the conversion.
pub fn convert_csv(
    input: impl Read,
    mut output: impl Write,
    options: CsvOptions,
    errors: &mut impl Write,
) -> anyhow::Result<CsvSummary> {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(input);
    let headers = reader
        .byte_headers()
        .context("cannot read the CSV header")?
        .clone();
    let with_pressure = check_header(&headers)?;
    let input_width = if with_pressure { 3 } else { 2 };
    let mut out_header: Vec<&str> = INPUT_COLUMNS[..input_width].to_vec();
    out_header.extend(OUTPUT_COLUMNS);
    writeln!(output, "{}", out_header.join(","))?;

    let mut record = csv::ByteRecord::new();
    let mut summary = CsvSummary::default();
    let mut line_buf = Vec::with_capacity(256);
    loop {
        let line = reader.position().line() + 1;
        match reader.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(err) => {
                writeln!(errors, "line {line}: unreadable CSV row: {err}")?;
                summary.bad_rows += 1;
                continue;
            }
        }
        let line = record.position().map_or(line, |p| p.line());
        line_buf.clear();
        for i in 0..input_width {
            if i > 0 {
                line_buf.push(b',');
            }
            push_field(&mut line_buf, record.get(i).unwrap_or_default());
        }
        match convert_row(&record, with_pressure, options) {
            Ok(d) => {
                summary.good_rows += 1;
                append_derived(&mut line_buf, &d);
            }
            Err(message) => {
                summary.bad_rows += 1;
                writeln!(errors, "line {line}: {message}")?;
                line_buf.extend_from_slice(b",,,,,,");
            }
        }
        line_buf.push(b'\n');
        output.write_all(&line_buf)?;
    }
    output.flush()?;
    Ok(summary)
}

/// Echoes an input field, quoted (RFC 4180) when it holds a comma, quote or line break.
fn push_field(buf: &mut Vec<u8>, field: &[u8]) {
    if field.iter().any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r')) {
        buf.push(b'"');
        for &b in field {
            if b == b'"' {
                buf.push(b'"');
            }
            buf.push(b);
        }
        buf.push(b'"');
    } else {
        buf.extend_from_slice(field);
    }
}

fn check_header(headers: &csv::ByteRecord) -> anyhow::Result<bool> {
    let names: Vec<String> = headers
        .iter()
        .map(|h| String::from_utf8_lossy(h).trim().to_string())
        .collect();
    let ok2 = names.len() == 2 && names[..] == INPUT_COLUMNS[..2];
    let ok3 = names.len() == 3 && names[..] == INPUT_COLUMNS[..];
    if !ok2 && !ok3 {
        bail!(
            "line 1: the CSV header must be `conductivity_mS_cm,temperature_C` or \
             `conductivity_mS_cm,temperature_C,pressure_dbar`, not `{}`",
            names.join(",")
        );
    }
    Ok(ok3)
}

fn convert_row(
    record: &csv::ByteRecord,
    with_pressure: bool,
    options: CsvOptions,
) -> Result<Derived, String> {
    let expected = if with_pressure { 3 } else { 2 };
    if record.len() != expected {
        return Err(format!("expected {expected} fields, found {}", record.len()));
    }
    let reported = number(record, 0, INPUT_COLUMNS[0])?;
    let temperature_c = number(record, 1, INPUT_COLUMNS[1])?;
    let pressure_dbar = if with_pressure {
        number(record, 2, INPUT_COLUMNS[2])?
    } else {
        0.0
    };
    let in_situ = options
        .probe_mode
        .in_situ_ms_cm(reported, temperature_c)
        .map_err(|e| e.to_string())?;
    derive_from_conductivity(in_situ, temperature_c, pressure_dbar, 0.0).map_err(|e| e.to_string())
}

fn number(record: &csv::ByteRecord, index: usize, column: &str) -> Result<f64, String> {
    let raw = record.get(index).unwrap_or_default();
    let text = std::str::from_utf8(raw).map_err(|_| format!("{column} is not valid UTF-8"))?;
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(format!("{column} `{text}` is not a finite number")),
        Err(_) if text.is_empty() => Err(format!("{column} is empty")),
        Err(_) => Err(format!("{column} `{text}` is not a number")),
    }
}

/// Appends the six derived values with the precision each quantity is meaningful to.
fn append_derived(buf: &mut Vec<u8>, d: &Derived) {
    use std::io::Write as _;
    // Writing into a Vec cannot fail.
    let _ = write!(
        buf,
        ",{:.4},{:.4},{:.3},{:.2},{:.4},{:.4}",
        d.practical_salinity,
        d.absolute_salinity_g_kg,
        d.density_kg_m3,
        d.osmolality_mosm_kg,
        d.osmotic_pressure_bar,
        d.freezing_point_c
    );
}
