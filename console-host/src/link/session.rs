//! A request/reply session over any [`Wire`]: every request goes with a line checksum,
//! every reply line is checked; a reply that does not arrive in time or arrives damaged
//! is asked for again — only for requests that may safely run twice — after the link is
//! resynchronised; a device that restarted under the session is noticed.
//!
//! What "safely run twice" means (common practice, no source: a retry must never repeat
//! motion or add data twice): every request except `move` (motion) and `pt x=…` (adds a
//! point). Those get one try; when their reply is lost the session says so and stops,
//! since the device may have run them.

use super::wire::Wire;
use matterwave_core::console::crc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// A complete reply: streamed `- …` items (checksums removed) and the final line.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Reply {
    /// The streamed items, in order.
    pub items: Vec<String>,
    /// The final `ok …` or `err …` line.
    pub last: String,
    /// When a `stop` was sent while the request ran ([`Session::stop_flag`]): the
    /// stop's own reply.
    pub stopped: Option<String>,
}

impl Reply {
    /// Whether the final line is `ok`.
    pub fn ok(&self) -> bool {
        self.last == "ok" || self.last.starts_with("ok ")
    }

    /// The streamed items' fields as one line (each item without its `- `, joined by
    /// spaces): the settings of a `get` without a key, which streams one item per
    /// setting, read with [`reply_field`] as one line.
    pub fn items_line(&self) -> String {
        let fields: Vec<&str> = self
            .items
            .iter()
            .map(|i| i.strip_prefix("- ").unwrap_or(i))
            .collect();
        fields.join(" ")
    }
}

/// What a session reports while a request runs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Event<'a> {
    /// A streamed item arrived (checksum checked and removed).
    Item(&'a str),
    /// The reply was lost or damaged and the request is sent again, for this reason;
    /// its items come again from the first.
    Retry(&'a str),
}

/// Why a request got no usable reply.
#[derive(Debug)]
pub enum LinkError {
    /// No complete reply within the timeout, after every allowed try.
    Silent { request: String, tries: u32 },
    /// A damaged reply to a request that must not be sent twice.
    Unsure { request: String, why: String },
    /// Every try of a request that may run twice got a damaged reply.
    Damaged {
        request: String,
        tries: u32,
        why: String,
    },
    /// The device restarted under the session (power, watchdog, reset button) and holds
    /// factory settings again: the session's mark is gone from its `status`, or its
    /// request count fell.
    DeviceReset { why: String },
    /// The port failed.
    Io(std::io::Error),
}

impl std::fmt::Display for LinkError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LinkError::Silent { request, tries } => write!(
                f,
                "no reply to `{request}` after {tries} tries; check the cable, the baud rate and that the controller is powered"
            ),
            LinkError::Unsure { request, why } => write!(
                f,
                "`{request}`: {why}; it may have run — check with pos/status before going on (not retried: it must not run twice)"
            ),
            LinkError::Damaged { request, tries, why } => write!(
                f,
                "`{request}`: {why} (on each of {tries} tries); the line is noisy — check the cable, its screening and the baud rate"
            ),
            LinkError::DeviceReset { why } => write!(
                f,
                "the controller restarted during the session ({why}): it holds factory settings, and its axes must be homed again"
            ),
            LinkError::Io(e) => write!(f, "link failed: {e}"),
        }
    }
}

/// What a session saw, for reports.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct LinkStats {
    /// Requests sent (first tries).
    pub requests: u64,
    /// Extra tries after a lost or damaged reply.
    pub retries: u64,
    /// Reply lines dropped as damaged (checksum wrong or malformed) or not expected.
    pub dropped_lines: u64,
    /// Bytes sent and received.
    pub bytes_out: u64,
    /// Bytes received.
    pub bytes_in: u64,
}

/// A session with one controller.
pub struct Session<W: Wire> {
    wire: W,
    /// How long to wait for the next reply line.
    pub timeout: Duration,
    /// Tries for a request that may run twice.
    pub tries: u32,
    rx: Vec<u8>,
    /// The device's request count when last seen (`status`), to notice a restart.
    seen_requests: Option<u64>,
    stats: LinkStats,
    /// Set it (from a signal handler or an input thread) to send `stop` at once, while
    /// a request still runs; it is cleared when the stop is sent.
    pub stop_flag: Arc<AtomicBool>,
    stop_sent: bool,
    /// The mark this session left on the device (`session id=`), while it has one.
    mark: Option<u32>,
}

/// How many streamed items a final line says came before it: `count=` of the lists
/// (`help`, `crystals`, `faces`, `beams`, `aim`, `get` without a key) and `points=` of
/// the plans. `None` for
/// replies that do not say (`dump`, `budget`, single-line replies): for those a lost
/// item line cannot be told from the final line.
pub fn announced_items(request: &str, last: &str) -> Option<u64> {
    let key = match request.split_whitespace().next()? {
        "help" | "crystals" | "faces" | "beams" | "aim" | "get" => "count",
        "plan" => "points",
        _ => return None,
    };
    if !last.starts_with("ok") {
        return None;
    }
    reply_field(last, key).and_then(|v| v.parse().ok())
}

/// The value of `key=` in a reply line (the line's checksum already removed), if it
/// has one: the one reader of reply fields on the host.
pub fn reply_field<'a>(line: &'a str, key: &str) -> Option<&'a str> {
    line.split(' ')
        .find_map(|w| w.strip_prefix(key)?.strip_prefix('='))
}

/// Whether `last` is the final line of a `status` reply (it counts the requests): only
/// such a line can tell that the session's mark is gone. Another `ok` read in its place
/// (the answer to a `stop` sent on Ctrl-C in the middle of the exchange, say) tells
/// nothing about a restart.
fn is_status_reply(last: &str) -> bool {
    last.starts_with("ok") && reply_field(last, "requests").is_some()
}

/// Whether a `status` line carries the session mark `id`.
fn has_mark(status: &str, id: u32) -> bool {
    reply_field(status, "session") == Some(id.to_string().as_str())
}

/// Whether `request` may be sent again when its reply is lost.
pub fn may_repeat(request: &str) -> bool {
    let mut w = request.split_whitespace();
    match w.next() {
        Some("move") => false,
        Some("pt") => w.next() == Some("clear"),
        _ => true,
    }
}

impl<W: Wire> Session<W> {
    /// A session on `wire` with a 2 s reply timeout and 3 tries.
    pub fn new(wire: W) -> Self {
        Session {
            wire,
            timeout: Duration::from_secs(2),
            tries: 3,
            rx: Vec::new(),
            seen_requests: None,
            stats: LinkStats::default(),
            stop_flag: Arc::new(AtomicBool::new(false)),
            stop_sent: false,
            mark: None,
        }
    }

    /// The link underneath.
    pub fn wire(&mut self) -> &mut W {
        &mut self.wire
    }

    /// What the session saw so far.
    pub fn stats(&self) -> LinkStats {
        self.stats
    }

    /// Sends `request` (one line, without checksum or line end) and returns its
    /// complete reply. `on_event` sees each streamed item as it arrives, and each retry
    /// (after which the items come again from the first).
    pub fn request_with(
        &mut self,
        request: &str,
        mut on_event: impl FnMut(Event<'_>),
    ) -> Result<Reply, LinkError> {
        let repeat = may_repeat(request);
        let tries = if repeat { self.tries.max(1) } else { 1 };
        self.stats.requests += 1;
        let mut last_why = String::new();
        for attempt in 0..tries {
            if attempt > 0 {
                self.stats.retries += 1;
                on_event(Event::Retry(&last_why));
                self.resync()?;
                // A reply lost to a restart must not be asked of the restarted device:
                // it would answer from factory settings.
                self.probe_mark()?;
            }
            let mut line = request.as_bytes().to_vec();
            line.extend_from_slice(&crc::suffix_for(request.as_bytes()));
            line.push(b'\n');
            self.stats.bytes_out += line.len() as u64;
            self.wire.send(&line).map_err(LinkError::Io)?;
            let mut items = Vec::new();
            match self.collect(request, &mut items, &mut |i: &str| on_event(Event::Item(i))) {
                Ok(Some(last)) => {
                    // The device saw a damaged request (err 402): nothing ran, so even a
                    // request that must not run twice may go again — but we stay
                    // conservative for motion and points.
                    if last.starts_with("err 402") && repeat && attempt + 1 < tries {
                        last_why = "the controller received the request damaged".into();
                        continue;
                    }
                    self.note_status(request, &last)?;
                    let stopped = self.stop_reply()?;
                    return Ok(Reply {
                        items,
                        last,
                        stopped,
                    });
                }
                Ok(None) => last_why = "no complete reply in time".into(),
                Err(why) => last_why = why,
            }
            // Asked to stop: no second try of a request the user interrupted.
            if !repeat || self.stop_sent {
                return Err(LinkError::Unsure {
                    request: request.to_string(),
                    why: last_why,
                });
            }
        }
        if last_why.starts_with("no complete") {
            Err(LinkError::Silent {
                request: request.to_string(),
                tries,
            })
        } else {
            Err(LinkError::Damaged {
                request: request.to_string(),
                tries,
                why: last_why,
            })
        }
    }

    /// After a request during which `stop` was sent: the stop's own reply.
    fn stop_reply(&mut self) -> Result<Option<String>, LinkError> {
        if !self.stop_sent {
            return Ok(None);
        }
        self.stop_sent = false;
        let mut none = Vec::new();
        match self.collect("stop", &mut none, &mut |_| {}) {
            Ok(Some(last)) => Ok(Some(last)),
            Ok(None) => Err(LinkError::Silent {
                request: "stop".into(),
                tries: 1,
            }),
            Err(why) => Err(LinkError::Unsure {
                request: "stop".into(),
                why,
            }),
        }
    }

    /// [`Session::request_with`] without a per-item callback.
    pub fn request(&mut self, request: &str) -> Result<Reply, LinkError> {
        self.request_with(request, |_| {})
    }

    /// Leaves a mark on the device (`session id=`, a number from the clock and process),
    /// which its `status` shows until it restarts. A controller without the request
    /// (err 403) is watched by its request count only.
    pub fn mark_session(&mut self) -> Result<(), LinkError> {
        let t = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos() as u64);
        let id = ((t ^ (u64::from(std::process::id()) << 20)) % 2_147_483_646 + 1) as u32;
        let r = self.request(&format!("session id={id}"))?;
        self.mark = r.ok().then_some(id);
        Ok(())
    }

    /// One `status`, one try, between the tries of another request: the session's mark
    /// must still be there.
    fn probe_mark(&mut self) -> Result<(), LinkError> {
        let Some(id) = self.mark else {
            return Ok(());
        };
        let mut line = b"status".to_vec();
        line.extend_from_slice(&crc::suffix_for(b"status"));
        line.push(b'\n');
        self.stats.bytes_out += line.len() as u64;
        self.wire.send(&line).map_err(LinkError::Io)?;
        let mut none = Vec::new();
        if let Ok(Some(last)) = self.collect("status", &mut none, &mut |_| {}) {
            if is_status_reply(&last) && !has_mark(&last, id) {
                self.mark = None;
                return Err(LinkError::DeviceReset {
                    why: "the session's mark is gone from its status".into(),
                });
            }
        }
        // No clean answer: the retry that follows will tell.
        self.resync()
    }

    /// Asks `status` and checks the device has not restarted since it was last asked.
    pub fn check_alive(&mut self) -> Result<(), LinkError> {
        self.request("status").map(|_| ())
    }

    /// A reply to `status` (or `hello` at the start) tells the device's request count.
    fn note_status(&mut self, request: &str, last: &str) -> Result<(), LinkError> {
        if request.trim() != "status" {
            return Ok(());
        }
        if let Some(id) = self.mark {
            if is_status_reply(last) && !has_mark(last, id) {
                self.mark = None;
                return Err(LinkError::DeviceReset {
                    why: "the session's mark is gone from its status".into(),
                });
            }
        }
        let now = reply_field(last, "requests").and_then(|v| v.parse::<u64>().ok());
        if let (Some(before), Some(now)) = (self.seen_requests, now) {
            // Each status counts itself: a count that did not grow is a new device.
            if now <= before {
                self.seen_requests = Some(now);
                return Err(LinkError::DeviceReset {
                    why: format!("its request count fell from {before} to {now}"),
                });
            }
        }
        if now.is_some() {
            self.seen_requests = now;
        }
        Ok(())
    }

    /// Reads reply lines until a final line: `Ok(Some(final))`, `Ok(None)` on timeout,
    /// `Err` when a line arrived damaged (the reply cannot be trusted whole).
    fn collect(
        &mut self,
        request: &str,
        items: &mut Vec<String>,
        on_item: &mut impl FnMut(&str),
    ) -> Result<Option<String>, String> {
        let mut damaged: Option<String> = None;
        loop {
            let Some(raw) = self.next_line().map_err(|e| e.to_string())? else {
                return match damaged {
                    Some(w) => Err(w),
                    None => Ok(None),
                };
            };
            let text = String::from_utf8_lossy(&raw)
                .trim_end_matches('\r')
                .to_string();
            if text.is_empty() {
                continue;
            }
            let body = match crc::verify(&text) {
                Ok((body, true)) => body.to_string(),
                Ok((_, false)) | Err(_) => {
                    self.stats.dropped_lines += 1;
                    damaged
                        .get_or_insert_with(|| format!("a reply line arrived damaged: {text:?}"));
                    continue;
                }
            };
            if body.starts_with("- ") || body == "-" {
                if damaged.is_none() {
                    on_item(&body);
                    items.push(body);
                }
            } else if body == "ok" || body.starts_with("ok ") || body.starts_with("err ") {
                if damaged.is_none() {
                    if let Some(n) = announced_items(request, &body) {
                        if n != items.len() as u64 {
                            self.stats.dropped_lines += 1;
                            damaged = Some(format!(
                                "a streamed line was lost: {n} announced, {} received",
                                items.len()
                            ));
                        }
                    }
                }
                return match damaged {
                    Some(w) => Err(w),
                    None => Ok(Some(body)),
                };
            } else {
                self.stats.dropped_lines += 1;
            }
        }
    }

    /// The next line from the wire (without its LF), or `None` after `timeout` of
    /// silence. Lines are bounded: bytes past twice the reply limit are dropped.
    fn next_line(&mut self) -> std::io::Result<Option<Vec<u8>>> {
        let limit = 2 * matterwave_core::console::controller::MAX_REPLY;
        let mut deadline = Instant::now() + self.timeout;
        loop {
            if let Some(i) = self.rx.iter().position(|&b| b == b'\n') {
                let mut line: Vec<u8> = self.rx.drain(..=i).collect();
                line.pop();
                line.truncate(limit);
                return Ok(Some(line));
            }
            let now = Instant::now();
            if now >= deadline {
                return Ok(None);
            }
            if self.stop_flag.swap(false, Ordering::SeqCst) && !self.stop_sent {
                let mut line = b"stop".to_vec();
                line.extend_from_slice(&crc::suffix_for(b"stop"));
                line.push(b'\n');
                self.wire.send(&line)?;
                self.stats.bytes_out += line.len() as u64;
                self.stop_sent = true;
            }
            let mut buf = [0u8; 1024];
            // In slices, so that a stop asked for meanwhile goes out at once.
            let n = self
                .wire
                .recv(&mut buf, (deadline - now).min(Duration::from_millis(50)))?;
            if n > 0 {
                self.stats.bytes_in += n as u64;
                self.rx.extend_from_slice(&buf[..n]);
                if self.rx.len() > 4 * limit && !self.rx.contains(&b'\n') {
                    // Garbage without line ends: keep only the tail.
                    let cut = self.rx.len() - limit;
                    self.rx.drain(..cut);
                }
                deadline = Instant::now() + self.timeout;
            }
        }
    }

    /// Brings the link back to a line boundary: ends any partial request on the
    /// device with a line end (an empty line is ignored there), then drops whatever
    /// arrives until the line has been quiet for a moment (bounded).
    fn resync(&mut self) -> Result<(), LinkError> {
        self.wire.send(b"\n").map_err(LinkError::Io)?;
        self.rx.clear();
        let quiet = Duration::from_millis(50).min(self.timeout);
        let give_up = Instant::now() + self.timeout * 4;
        let mut buf = [0u8; 1024];
        while Instant::now() < give_up {
            let n = self.wire.recv(&mut buf, quiet).map_err(LinkError::Io)?;
            if n == 0 {
                break;
            }
            self.stats.bytes_in += n as u64;
        }
        Ok(())
    }
}
