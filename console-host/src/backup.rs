//! `mwctl backup FILE` and `mwctl restore FILE`: a controller's whole configuration
//! (every setting, axis and zone, as its `dump` gives it) to a file and back.
//!
//! The file is text: `#` comment lines, then `key=value` header lines (`format`,
//! `protocol`, `device`, `version`, `lines`), the request lines of the dump, and last a
//! `crc32=` line over every byte before it. Restore is all or nothing: the file is
//! checked first (checksum, format, protocol version, device kind, line count), the
//! device must be at rest, its own configuration is saved, the file's lines are sent in
//! order — the first refusal puts the saved configuration back — and the result is read
//! back and compared with the file ([`compare_read_back`]). A file written before the
//! newest setting keys (an older controller's dump: no `temperature=`, `relax_d12=`,
//! `relax_d23=` or `v0_model=`) is accepted when each key it lacks reads back at its
//! factory value (the in-process simulator's factory `dump`, the core's own
//! `Settings::defaults`); any other difference puts the saved configuration back too.

use crate::error::{CliError, CliResult};
use crate::link::session::Session;
use crate::link::wire::Wire;
use crate::link::{self, LinkSpec};
use std::io::Write;

/// The format line of a backup file.
pub const FORMAT: &str = "matterwave-backup 1";

/// CRC-32 (IEEE 802.3: reflected polynomial 0xEDB88320, initial value and final XOR
/// 0xFFFFFFFF), bitwise. Check value: `crc32(b"123456789") == 0xCBF43926`.
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut c = 0xFFFF_FFFFu32;
    for &b in bytes {
        c ^= u32::from(b);
        for _ in 0..8 {
            c = if c & 1 != 0 {
                (c >> 1) ^ 0xEDB8_8320
            } else {
                c >> 1
            };
        }
    }
    !c
}

/// The configuration as the device dumps it: its request lines, in order.
pub(crate) fn dump<W: Wire>(s: &mut Session<W>) -> CliResult<Vec<String>> {
    let r = s
        .request("dump")
        .map_err(|e| CliError::new(format!("dump: {e}")))?;
    if !r.ok() {
        return Err(CliError::new(format!(
            "dump: the controller answered {}",
            r.last
        )));
    }
    Ok(r.items
        .iter()
        .map(|l| l.trim_start_matches("- ").to_string())
        .collect())
}

fn hello_field(hello: &str, key: &str) -> String {
    crate::link::session::reply_field(hello, key)
        .unwrap_or("")
        .to_string()
}

/// The text of a backup of `lines` from a device that answered `hello` so.
pub fn file_text(hello: &str, lines: &[String]) -> String {
    let mut t = String::new();
    t.push_str("# matterwave controller configuration; restore with: mwctl restore FILE\n");
    t.push_str(&format!("format={FORMAT}\n"));
    t.push_str(&format!("protocol={}\n", hello_field(hello, "protocol")));
    t.push_str(&format!("device={}\n", hello_field(hello, "name")));
    t.push_str(&format!("version={}\n", hello_field(hello, "version")));
    t.push_str(&format!("lines={}\n", lines.len()));
    for l in lines {
        t.push_str(l);
        t.push('\n');
    }
    let crc = crc32(t.as_bytes());
    t.push_str(&format!("crc32={crc:08X}\n"));
    t
}

/// A backup file read and checked.
#[derive(Debug, PartialEq, Eq)]
pub struct Backup {
    /// Protocol version it was written with.
    pub protocol: String,
    /// Device kind (`hello` name).
    pub device: String,
    /// Firmware version it came from.
    pub version: String,
    /// The request lines.
    pub lines: Vec<String>,
}

/// Reads and checks a backup's text: checksum first (a damaged file is refused before
/// anything in it is believed), then the header.
pub fn parse(text: &str) -> Result<Backup, String> {
    let body_end = text
        .trim_end_matches('\n')
        .rfind('\n')
        .map(|i| i + 1)
        .ok_or("not a backup file: no checksum line")?;
    let (body, last) = text.split_at(body_end);
    let claimed = last
        .trim_end()
        .strip_prefix("crc32=")
        .and_then(|h| u32::from_str_radix(h, 16).ok())
        .ok_or("not a backup file: the last line is not crc32=XXXXXXXX")?;
    let computed = crc32(body.as_bytes());
    if claimed != computed {
        return Err(format!(
            "the file is damaged: its checksum says {claimed:08X}, its contents give {computed:08X}"
        ));
    }
    let mut head = std::collections::BTreeMap::new();
    let mut lines = Vec::new();
    let mut want_lines: Option<usize> = None;
    for l in body.lines().filter(|l| !l.starts_with('#')) {
        match want_lines {
            None => {
                let (k, v) = l
                    .split_once('=')
                    .ok_or_else(|| format!("header line {l:?} is not key=value"))?;
                if k == "lines" {
                    want_lines = Some(v.parse().map_err(|_| format!("lines={v}: not a count"))?);
                }
                head.insert(k.to_string(), v.to_string());
            }
            Some(_) => lines.push(l.to_string()),
        }
    }
    let get = |k: &str| head.get(k).cloned().unwrap_or_default();
    if get("format") != FORMAT {
        return Err(format!(
            "format {:?}: this mwctl reads {FORMAT:?}",
            get("format")
        ));
    }
    if want_lines != Some(lines.len()) {
        return Err(format!(
            "the header says {:?} request lines, the file has {}",
            want_lines,
            lines.len()
        ));
    }
    Ok(Backup {
        protocol: get("protocol"),
        device: get("device"),
        version: get("version"),
        lines,
    })
}

/// `mwctl backup FILE`.
pub fn backup(
    path: &std::path::Path,
    spec: &LinkSpec,
    json: bool,
    out: &mut dyn Write,
) -> CliResult<()> {
    let mut s = link::connect(spec)?;
    let hello = s
        .request("hello")
        .map_err(|e| CliError::new(format!("backup: {e}")))?;
    let lines = dump(&mut s)?;
    let text = file_text(&hello.last, &lines);
    std::fs::write(path, &text)
        .map_err(|e| CliError::new(format!("backup {}: {e}", path.display())))?;
    let r = if json {
        let v = serde_json::json!({
            "file": path.display().to_string(),
            "lines": lines.len(),
            "device": hello_field(&hello.last, "name"),
            "version": hello_field(&hello.last, "version"),
            "protocol": hello_field(&hello.last, "protocol").parse::<u64>().ok(),
        });
        writeln!(out, "{v}")
    } else {
        writeln!(
            out,
            "backup: {} configuration lines from {} written to {}",
            lines.len(),
            hello_field(&hello.last, "name"),
            path.display()
        )
    };
    r.map_err(|e| CliError::new(format!("output: {e}")))?;
    Ok(())
}

/// `mwctl restore FILE`.
pub fn restore(
    path: &std::path::Path,
    spec: &LinkSpec,
    json: bool,
    out: &mut dyn Write,
) -> CliResult<()> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| CliError::new(format!("restore {}: {e}", path.display())))?;
    let b = parse(&text)
        .map_err(|e| CliError::new(format!("restore {}: {e}; nothing was sent", path.display())))?;
    let mut s = link::connect(spec)?;
    let mut sink = std::io::sink();
    let text_out: &mut dyn Write = if json { &mut sink } else { out };
    let done = restore_session(&mut s, &b, text_out)
        .map_err(|e| CliError::new(format!("restore {}: {e}", path.display())))?;
    if json {
        let absent: Vec<&str> = done
            .absent_keys
            .iter()
            .filter_map(|kv| kv.split_once('=').map(|(k, _)| k))
            .collect();
        let v = serde_json::json!({
            "file": path.display().to_string(),
            "lines": b.lines.len(),
            "read_back_identical": done.absent_keys.is_empty(),
            "absent_keys": absent,
            "unknown_axes": done.unknown_axes,
        });
        writeln!(out, "{v}").map_err(|e| CliError::new(format!("output: {e}")))?;
    }
    Ok(())
}

/// What a restore came to.
#[derive(Debug, Default, PartialEq, Eq)]
pub struct Restored {
    /// Axes whose position is unknown afterwards (their calibration was sent).
    pub unknown_axes: Vec<String>,
    /// Setting keys the file lacks (it predates them), each read back at its factory
    /// value, as `key=value` in dump order; empty when the read-back is identical.
    pub absent_keys: Vec<String>,
}

/// The trailing `set` lines of a dump (the settings) and the lines before them (the
/// rig: the head line, axes and zones).
fn split_settings(lines: &[String]) -> (&[String], &[String]) {
    let n = lines
        .iter()
        .rev()
        .take_while(|l| l.starts_with("set "))
        .count();
    lines.split_at(lines.len() - n)
}

/// The `key=value` tokens of settings lines.
fn setting_tokens(lines: &[String]) -> impl Iterator<Item = (&str, &str)> {
    lines
        .iter()
        .flat_map(|l| l.split(' ').skip(1))
        .filter_map(|t| t.split_once('='))
}

/// Compares the dump read back after a restore (`now`) with the file's lines (`file`):
/// `Ok` with the keys the file lacks (`key=value` as read back) when the read-back is
/// the file's lines but for setting keys the file's settings lines do not name — a
/// backup older than those keys — each of which reads back at its value in `factory`
/// (a factory console's dump); `Err` with what differs otherwise. The rig's lines must
/// be identical, and so must the settings, key by key (on whichever dump line each
/// is), once the absent keys are taken out.
pub fn compare_read_back(
    file: &[String],
    now: &[String],
    factory: &[String],
) -> Result<Vec<String>, String> {
    if now == file {
        return Ok(Vec::new());
    }
    let (file_rig, file_set) = split_settings(file);
    let (now_rig, now_set) = split_settings(now);
    if file_rig != now_rig {
        return Err("its axis and zone lines read back differ from the file".into());
    }
    let named: std::collections::BTreeSet<&str> =
        setting_tokens(file_set).map(|(k, _)| k).collect();
    let (_, factory_set) = split_settings(factory);
    let factory_of: std::collections::BTreeMap<&str, &str> = setting_tokens(factory_set).collect();
    let mut absent = Vec::new();
    let mut kept: Vec<&str> = Vec::new();
    for t in now_set.iter().flat_map(|l| l.split(' ').skip(1)) {
        match t.split_once('=') {
            Some((k, v)) if !named.contains(k) => {
                let f = factory_of.get(k).copied();
                if f != Some(v) {
                    let f = f.unwrap_or("(none)");
                    return Err(format!(
                        "the file (older than the setting {k}) does not set {k}, and the controller has {k}={v}, not its factory value {f}; set {k}={f} first, or restore a newer backup"
                    ));
                }
                absent.push(t.to_string());
            }
            _ => kept.push(t),
        }
    }
    // The settings are compared key by key, not line by line: a newer firmware may
    // carry a key on another dump line (the beam moved after the overlayer).
    let mut file_tokens: Vec<&str> = file_set.iter().flat_map(|l| l.split(' ').skip(1)).collect();
    kept.sort_unstable();
    file_tokens.sort_unstable();
    if kept != file_tokens {
        return Err("its settings read back differ from the file's".into());
    }
    Ok(absent)
}

/// The dump of a factory console: the in-process simulator's, whose settings are the
/// core's factory settings.
fn factory_dump() -> Result<Vec<String>, String> {
    let mut c = crate::link::device::sim_console().map_err(|e| e.to_string())?;
    let lines = crate::talk::exchange(&mut c, "dump");
    Ok(lines
        .iter()
        .filter_map(|l| l.strip_prefix("- "))
        .map(str::to_string)
        .collect())
}

/// Sends `saved` back and says how that went (for a restore that failed).
fn put_back<W: Wire>(s: &mut Session<W>, saved: &[String]) -> Result<String, String> {
    for back in saved {
        let _ = s.request(back);
    }
    let now = dump(s).map_err(|e| e.to_string())?;
    let mut state = if now == saved {
        "the controller's configuration was put back (read back: identical)".to_string()
    } else {
        "putting the controller's configuration back did not read back identical; check it with dump".to_string()
    };
    let st = s.request("status").map_err(|e| e.to_string())?.last;
    let unknown = hello_field(&st, "unknown");
    if !unknown.is_empty() {
        state.push_str(&format!(
            "; positions unknown since a calibration line ran: {unknown} (home them)"
        ));
    }
    Ok(state)
}

/// Restores `b` on an open session, all or nothing (see the module documentation).
pub fn restore_session<W: Wire>(
    s: &mut Session<W>,
    b: &Backup,
    out: &mut dyn Write,
) -> Result<Restored, String> {
    let hello = s.request("hello").map_err(|e| e.to_string())?.last;
    let (name, protocol) = (hello_field(&hello, "name"), hello_field(&hello, "protocol"));
    if b.device != name {
        return Err(format!(
            "the file is from a {:?} device, this is {name:?}; nothing was sent",
            b.device
        ));
    }
    if b.protocol != protocol {
        return Err(format!(
            "the file speaks protocol {}, the controller {protocol}; nothing was sent",
            b.protocol
        ));
    }
    let st = s.request("status").map_err(|e| e.to_string())?.last;
    if !st.contains(" enabled=0") || !st.contains(" moving=0") {
        return Err(
            "motion is enabled or an axis moves: send disable and wait; nothing was sent".into(),
        );
    }
    let saved = dump(s).map_err(|e| e.to_string())?;
    for (i, l) in b.lines.iter().enumerate() {
        let r = s.request(l).map_err(|e| e.to_string())?;
        if !r.ok() {
            // Put the controller's own configuration back.
            let state = put_back(s, &saved)?;
            return Err(format!(
                "line {} `{l}` was refused ({}); {state}",
                i + 1,
                r.last
            ));
        }
    }
    let now = dump(s).map_err(|e| e.to_string())?;
    let absent = match compare_read_back(&b.lines, &now, &factory_dump()?) {
        Ok(a) => a,
        Err(why) => {
            let state = put_back(s, &saved)?;
            return Err(format!(
                "the configuration read back after restoring differs from the file: {why}; {state}"
            ));
        }
    };
    let st = s.request("status").map_err(|e| e.to_string())?.last;
    let unknown = hello_field(&st, "unknown");
    if absent.is_empty() {
        let _ = writeln!(
            out,
            "restore: {} configuration lines sent; read back: identical to the file",
            b.lines.len()
        );
    } else {
        let _ = writeln!(
            out,
            "restore: {} configuration lines sent; read back: identical to the file but for the settings it predates, each at its factory value: {}",
            b.lines.len(),
            absent.join(" ")
        );
    }
    if !unknown.is_empty() {
        let _ = writeln!(
            out,
            "restore: positions now unknown (calibration changed): {unknown}; home them before enable"
        );
    }
    Ok(Restored {
        unknown_axes: unknown
            .split(',')
            .filter(|a| !a.is_empty())
            .map(str::to_string)
            .collect(),
        absent_keys: absent,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn crc32_check_value() {
        // The published check value of CRC-32/ISO-HDLC (the catalogue of parametrised
        // CRC algorithms; from memory): 0xCBF43926 for "123456789".
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
    }

    #[test]
    fn a_file_round_trips_and_any_damage_is_refused() {
        let lines = vec![
            "set acceptance=1".to_string(),
            "zone name=arm i=1 off".into(),
        ];
        let t = file_text(
            "ok name=matterwave version=0.1.0 protocol=1 max_line=120",
            &lines,
        );
        let b = parse(&t).expect("reads back");
        assert_eq!(b.lines, lines);
        assert_eq!(
            (b.device.as_str(), b.protocol.as_str()),
            ("matterwave", "1")
        );
        // Every single-byte change is caught by the checksum.
        for i in 0..t.len() - 1 {
            let mut bytes = t.clone().into_bytes();
            bytes[i] ^= 0x01;
            let s = String::from_utf8_lossy(&bytes);
            assert!(parse(&s).is_err(), "byte {i} changed and accepted");
        }
    }
}
