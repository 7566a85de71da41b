//! The scan file (docs/SCAN.md): its writer and its reader, in one place, for `mwctl
//! scan`, `--resume` and anything that reads scan data (plots).
//!
//! A file is, in order: header lines `# key=value` (what the scan is: version, link,
//! plan, the controller's configuration, start time); one column line ([`COLUMNS`]); then
//! one data row per point, each written and flushed as soon as the point is measured.
//! Comment lines among the rows record events (`# end …` when a run stops, `# resume …`
//! when one continues). A last line without its line end is a row cut off mid-write
//! (power lost, process killed): the reader reports it as `torn` and `--resume` drops it
//! and measures that point again.

use crate::error::{CliError, CliResult};
use std::io::Write;

/// The first header line of every scan file, with the format's version.
pub const MAGIC: &str = "# format=mwctl-scan 1";

/// The data columns, in order (units in the names; `current` is in the board's unit,
/// nA on the simulator).
pub const COLUMNS: [&str; 17] = [
    "index",
    "nominal_ev",
    "sample_ev",
    "arm_deg",
    "elevation_deg",
    "tilt_deg",
    "azimuth_deg",
    "arm_steps",
    "elevation_steps",
    "tilt_steps",
    "azimuth_steps",
    "current",
    "time_unix_s",
    "status",
    "peak_ev",
    "view",
    "note",
];

/// One row: one point of the plan. Cells the point has no value for are empty (an
/// unreachable point has no angles and no reading).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Row {
    /// The point's index in the plan, from 0.
    pub index: u32,
    /// The nominal energy (gun setting), eV, as the plan gave it.
    pub nominal_ev: Option<f64>,
    /// The kinetic energy at the sample, eV, as the controller reported it (`get kinetic`).
    pub sample_ev: Option<f64>,
    /// Arm, elevation, tilt, azimuth, degrees, as `pos` reported them after arrival.
    pub angles_deg: [Option<f64>; 4],
    /// The same axes' step counts.
    pub steps: [Option<i64>; 4],
    /// The detector reading (`read`, `current=`).
    pub current: Option<f64>,
    /// When the reading was taken, seconds since 1970-01-01 UTC.
    pub time_unix_s: f64,
    /// [`Status`] as text: `ok`, `off-target`, `unreachable`, `refused`.
    pub status: String,
    /// For `iv`: the I-V maximum this point lies at (gun setting, eV).
    pub peak_ev: Option<f64>,
    /// For `sweep`: the beam in view, `h;k`.
    pub view: String,
    /// The controller's words for a status other than `ok` (an error code, axis, zone),
    /// without commas.
    pub note: String,
}

fn cell_f(v: Option<f64>) -> String {
    v.map(|x| x.to_string()).unwrap_or_default()
}

fn cell_i(v: Option<i64>) -> String {
    v.map(|x| x.to_string()).unwrap_or_default()
}

/// Text safe in one cell: commas, quotes and line ends become spaces or are dropped.
pub fn clean_cell(s: &str) -> String {
    s.chars()
        .map(|c| {
            if matches!(c, ',' | '\n' | '\r') {
                ' '
            } else {
                c
            }
        })
        .filter(|&c| c != '"')
        .collect::<String>()
        .trim()
        .to_string()
}

impl Row {
    /// The row as one CSV line, without the line end.
    pub fn to_line(&self) -> String {
        let mut cells = vec![
            self.index.to_string(),
            cell_f(self.nominal_ev),
            cell_f(self.sample_ev),
        ];
        cells.extend(self.angles_deg.iter().map(|a| cell_f(*a)));
        cells.extend(self.steps.iter().map(|s| cell_i(*s)));
        cells.push(cell_f(self.current));
        cells.push(format!("{:.3}", self.time_unix_s));
        cells.push(clean_cell(&self.status));
        cells.push(cell_f(self.peak_ev));
        cells.push(clean_cell(&self.view));
        cells.push(clean_cell(&self.note));
        cells.join(",")
    }

    /// Reads a data line; the message names the column at fault.
    pub fn parse(line: &str) -> Result<Row, String> {
        let cells: Vec<&str> = line.split(',').collect();
        if cells.len() != COLUMNS.len() {
            return Err(format!(
                "{} cells, the format has {} ({})",
                cells.len(),
                COLUMNS.len(),
                COLUMNS.join(",")
            ));
        }
        let f = |i: usize| -> Result<Option<f64>, String> {
            let c = cells.get(i).copied().unwrap_or("");
            if c.is_empty() {
                return Ok(None);
            }
            c.parse::<f64>()
                .ok()
                .filter(|x| x.is_finite())
                .map(Some)
                .ok_or_else(|| format!("{} = {c:?} is not a number", COLUMNS[i]))
        };
        let n = |i: usize| -> Result<Option<i64>, String> {
            let c = cells.get(i).copied().unwrap_or("");
            if c.is_empty() {
                return Ok(None);
            }
            c.parse::<i64>()
                .map(Some)
                .map_err(|_| format!("{} = {c:?} is not a whole number", COLUMNS[i]))
        };
        let index = n(0)?
            .and_then(|i| u32::try_from(i).ok())
            .ok_or_else(|| "index missing or negative".to_string())?;
        let time_unix_s = f(12)?.ok_or_else(|| "time_unix_s missing".to_string())?;
        let status = cells[13].to_string();
        if Status::parse(&status).is_none() {
            return Err(format!(
                "status = {status:?}; accepted: {}",
                Status::ALL.map(Status::word).join(", ")
            ));
        }
        Ok(Row {
            index,
            nominal_ev: f(1)?,
            sample_ev: f(2)?,
            angles_deg: [f(3)?, f(4)?, f(5)?, f(6)?],
            steps: [n(7)?, n(8)?, n(9)?, n(10)?],
            current: f(11)?,
            time_unix_s,
            status,
            peak_ev: f(14)?,
            view: cells[15].to_string(),
            note: cells[16].to_string(),
        })
    }
}

/// What became of a point (the `status` column).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Status {
    /// Measured at the planned step counts.
    Ok,
    /// Measured, but the axes stood elsewhere than planned (`pos` differed): the angles
    /// and steps are where it was measured.
    OffTarget,
    /// The plan had no reachable solution here (its `err=`): nothing moved, nothing read.
    Unreachable,
    /// The controller refused the move (a limit, zone or residual, err 3xx): nothing
    /// read; the axes stayed where they were.
    Refused,
}

impl Status {
    /// Every status, in the order of docs/SCAN.md.
    pub const ALL: [Status; 4] = [
        Status::Ok,
        Status::OffTarget,
        Status::Unreachable,
        Status::Refused,
    ];

    /// The word in the file.
    pub fn word(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::OffTarget => "off-target",
            Status::Unreachable => "unreachable",
            Status::Refused => "refused",
        }
    }

    /// The status a word names.
    pub fn parse(word: &str) -> Option<Status> {
        Status::ALL.into_iter().find(|s| s.word() == word)
    }
}

/// A scan file as read back.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ScanFile {
    /// The header's `key=value` pairs, in order (a key may repeat: `rig_line`,
    /// `device_dump`).
    pub header: Vec<(String, String)>,
    /// The data rows, in file order.
    pub rows: Vec<Row>,
    /// Comment lines after the column line (`end …`, `resume …`), without `# `.
    pub events: Vec<String>,
    /// Whether the last line had no line end (it is not in `rows`).
    pub torn: bool,
    /// Bytes up to the end of the last complete line: where a resumed scan goes on.
    pub complete_len: u64,
}

impl ScanFile {
    /// The first value of header key `key`.
    pub fn get(&self, key: &str) -> Option<&str> {
        self.header
            .iter()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.as_str())
    }

    /// Every value of header key `key`, in order.
    pub fn all(&self, key: &str) -> Vec<&str> {
        self.header
            .iter()
            .filter(|(k, _)| k == key)
            .map(|(_, v)| v.as_str())
            .collect()
    }

    /// The last `end` event's status word (`complete`, `interrupted`, …), if any.
    pub fn last_end(&self) -> Option<&str> {
        self.events
            .iter()
            .rev()
            .find_map(|e| e.strip_prefix("end "))
            .and_then(|e| crate::link::session::reply_field(e, "status"))
    }

    /// Reads a scan file's text. Errors name the line and what is wrong with it.
    pub fn parse(text: &str) -> Result<ScanFile, String> {
        let mut f = ScanFile::default();
        let mut columns_seen = false;
        let mut offset = 0usize;
        let mut first = true;
        for (i, piece) in text.split_inclusive('\n').enumerate() {
            let n = i + 1;
            let Some(line) = piece.strip_suffix('\n') else {
                // The last line, cut off mid-write.
                f.torn = !piece.is_empty();
                break;
            };
            offset += piece.len();
            f.complete_len = offset as u64;
            let line = line.strip_suffix('\r').unwrap_or(line);
            if first {
                if line != MAGIC {
                    return Err(format!(
                        "line 1 is {line:?}, not {MAGIC:?}: not a scan file of mwctl scan"
                    ));
                }
                first = false;
                continue;
            }
            if let Some(c) = line.strip_prefix('#') {
                let c = c.strip_prefix(' ').unwrap_or(c);
                if columns_seen {
                    f.events.push(c.to_string());
                } else {
                    let (k, v) = c.split_once('=').ok_or_else(|| {
                        format!("line {n}: header line {line:?} is not # key=value")
                    })?;
                    f.header.push((k.to_string(), v.to_string()));
                }
                continue;
            }
            if !columns_seen {
                if line != COLUMNS.join(",") {
                    return Err(format!(
                        "line {n}: columns {line:?}; this format has {}",
                        COLUMNS.join(",")
                    ));
                }
                columns_seen = true;
                continue;
            }
            if line.is_empty() {
                continue;
            }
            let row = Row::parse(line).map_err(|e| format!("line {n}: {e}"))?;
            f.rows.push(row);
        }
        if first {
            return Err("the file is empty: not a scan file of mwctl scan".into());
        }
        Ok(f)
    }

    /// Reads the scan file at `path` ([`ScanFile::parse`]).
    pub fn read(path: &std::path::Path) -> CliResult<ScanFile> {
        let text =
            std::fs::read(path).map_err(|e| CliError::new(format!("{}: {e}", path.display())))?;
        let text = String::from_utf8_lossy(&text);
        ScanFile::parse(&text).map_err(|e| CliError::new(format!("{}: {e}", path.display())))
    }
}

/// The writer: each line is written and flushed (and synced to the disk) at once, so
/// that what was measured survives the process.
pub struct Writer {
    file: std::fs::File,
    path: std::path::PathBuf,
}

impl Writer {
    /// Creates `path` (refusing an existing file unless `force`) and writes the header
    /// and the column line.
    pub fn create(
        path: &std::path::Path,
        header: &[(String, String)],
        force: bool,
    ) -> CliResult<Writer> {
        let mut o = std::fs::OpenOptions::new();
        o.write(true);
        if force {
            o.create(true).truncate(true);
        } else {
            o.create_new(true);
        }
        let file = o.open(path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::AlreadyExists {
                CliError::new(format!(
                    "--out {}: the file exists; give --resume {} to continue that scan, --force to overwrite it, or another --out",
                    path.display(),
                    path.display()
                ))
            } else {
                CliError::new(format!("--out {}: {e}", path.display()))
            }
        })?;
        let mut w = Writer {
            file,
            path: path.to_path_buf(),
        };
        let mut text = format!("{MAGIC}\n");
        for (k, v) in header {
            text.push_str(&format!("# {k}={}\n", clean_line(v)));
        }
        text.push_str(&COLUMNS.join(","));
        text.push('\n');
        w.put(&text)?;
        Ok(w)
    }

    /// Opens an existing scan file to go on: cuts it after its last complete line
    /// (`complete_len`, dropping a torn row) and appends from there.
    pub fn append(path: &std::path::Path, complete_len: u64) -> CliResult<Writer> {
        let file = std::fs::OpenOptions::new()
            .write(true)
            .open(path)
            .map_err(|e| CliError::new(format!("--resume {}: {e}", path.display())))?;
        file.set_len(complete_len)
            .map_err(|e| CliError::new(format!("--resume {}: {e}", path.display())))?;
        let mut w = Writer {
            file,
            path: path.to_path_buf(),
        };
        use std::io::Seek;
        w.file
            .seek(std::io::SeekFrom::End(0))
            .map_err(|e| w.err(e))?;
        Ok(w)
    }

    fn err(&self, e: std::io::Error) -> CliError {
        CliError::new(format!(
            "{}: {e}; the rows written so far are kept",
            self.path.display()
        ))
    }

    fn put(&mut self, text: &str) -> CliResult<()> {
        self.file
            .write_all(text.as_bytes())
            .and_then(|()| self.file.flush())
            .and_then(|()| self.file.sync_data())
            .map_err(|e| self.err(e))
    }

    /// Writes one data row.
    pub fn row(&mut self, row: &Row) -> CliResult<()> {
        self.put(&format!("{}\n", row.to_line()))
    }

    /// Writes one event comment (`end …`, `resume …`).
    pub fn event(&mut self, text: &str) -> CliResult<()> {
        self.put(&format!("# {}\n", clean_line(text)))
    }
}

/// One line: line ends become spaces.
fn clean_line(s: &str) -> String {
    s.replace(['\n', '\r'], " ")
}

/// A time as ISO 8601 UTC to the second (`2026-12-03T15:04:05Z`), from seconds since
/// 1970-01-01 (proleptic Gregorian calendar; days to dates after H. Hinnant's
/// `civil_from_days` algorithm, public domain).
pub fn iso_utc(unix_s: f64) -> String {
    let secs = unix_s.floor() as i64;
    let days = secs.div_euclid(86_400);
    let sod = secs.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        sod / 3600,
        sod % 3600 / 60,
        sod % 60
    )
}

/// Now, seconds since 1970-01-01 UTC.
pub fn now_unix_s() -> f64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0.0, |d| d.as_secs_f64())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_dates_match_known_instants() {
        // POSIX time of known instants (from memory, checkable with `date -u -d @N`).
        assert_eq!(iso_utc(0.0), "1970-01-01T00:00:00Z");
        assert_eq!(iso_utc(951_782_400.0), "2000-02-29T00:00:00Z");
        assert_eq!(iso_utc(1_234_567_890.0), "2009-02-13T23:31:30Z");
        assert_eq!(iso_utc(4_102_444_799.0), "2099-12-31T23:59:59Z");
    }

    #[test]
    fn a_row_reads_back_as_written_and_a_torn_line_is_reported() {
        let r = Row {
            index: 3,
            nominal_ev: Some(60.0),
            sample_ev: Some(58.1),
            angles_deg: [Some(94.0342), Some(0.0), Some(20.00025), Some(-0.5)],
            steps: [Some(83586), Some(0), Some(17778), Some(-222)],
            current: Some(7.25),
            time_unix_s: 1_800_000_000.125,
            status: "ok".into(),
            peak_ev: None,
            view: "1;0".into(),
            note: String::new(),
        };
        let mut text = format!("{MAGIC}\n# kind=track\n{}\n", COLUMNS.join(","));
        text.push_str(&r.to_line());
        text.push('\n');
        let whole = text.len() as u64;
        text.push_str("4,80,78");
        let f = ScanFile::parse(&text).unwrap();
        assert_eq!(f.rows, vec![r]);
        assert!(f.torn);
        assert_eq!(f.complete_len, whole);
        assert_eq!(f.get("kind"), Some("track"));
        assert!(ScanFile::parse("index,x\n").is_err());
        let bad = text.replace(",ok,", ",fine,");
        assert!(ScanFile::parse(&bad).unwrap_err().contains("status"));
    }
}
