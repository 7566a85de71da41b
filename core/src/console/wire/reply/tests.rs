//! Unit tests of the module.

use super::*;

/// Collects written bytes; optionally fails or stalls after `limit` bytes.
struct Sink {
    data: [u8; 512],
    len: usize,
    limit: usize,
    zero: bool,
    chunk: usize,
}

impl Sink {
    fn new() -> Self {
        Self {
            data: [0; 512],
            len: 0,
            limit: 512,
            zero: false,
            chunk: 3,
        }
    }
    fn text(&self) -> &str {
        core::str::from_utf8(&self.data[..self.len]).unwrap()
    }
}

/// The sink's failure.
const BROKEN: embedded_io::ErrorKind = embedded_io::ErrorKind::Other;

impl embedded_io::ErrorType for Sink {
    type Error = embedded_io::ErrorKind;
}

impl Write for Sink {
    fn write(&mut self, buf: &[u8]) -> Result<usize, embedded_io::ErrorKind> {
        if buf.is_empty() {
            return Ok(0);
        }
        if self.len >= self.limit {
            return if self.zero { Ok(0) } else { Err(BROKEN) };
        }
        // Short writes, to exercise the loop.
        let n = buf.len().min(self.chunk).min(self.limit - self.len);
        self.data[self.len..self.len + n].copy_from_slice(&buf[..n]);
        self.len += n;
        Ok(n)
    }
    fn flush(&mut self) -> Result<(), embedded_io::ErrorKind> {
        Ok(())
    }
}

#[test]
fn shapes() {
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::new(&mut sink, false);
    rw.item().field_str("id", "cu").field_f32_rt("a", 3.615);
    rw.finish().unwrap();
    rw.ok().field_i32("count", -1).field_f32("e", 150.0, 1);
    rw.finish().unwrap();
    rw.err(415, "unknown crystal id");
    rw.finish().unwrap();
    rw.finish().unwrap(); // empty: nothing
    assert_eq!(
        sink.text(),
        "- id=cu a=3.615\nok count=-1 e=150.0\nerr 415 unknown crystal id\n"
    );
}

#[test]
fn checksums() {
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::new(&mut sink, true);
    assert!(rw.crc_enabled());
    rw.ok().field_str("x", "1");
    rw.finish().unwrap();
    let line = sink.text().strip_suffix('\n').unwrap();
    assert_eq!(crc::verify(line), Ok(("ok x=1", true)));
}

#[test]
fn sanitising() {
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::new(&mut sink, false);
    rw.err(103, "tilt beyond ±89.9°; a*b\tc\nd ☃");
    assert_eq!(rw.line(), "err 103 tilt beyond +-89.9deg; a?b c d ?");
    rw.ok().field_str("name", "two words\r\n").word("Å·λ");
    assert_eq!(rw.line(), "ok name=two_words__ A.lambda");
    let line = rw.line();
    assert!(line.bytes().all(|b| (0x20..0x7F).contains(&b) && b != b'*'));
}

#[test]
fn overflow_is_all_or_nothing() {
    let mut sink = Sink::new();
    {
        let mut rw = ReplyWriter::<_, 20>::with_line_length(&mut sink, false);
        assert_eq!(rw.capacity(), 15);
        rw.ok().field_str("a", "123456789"); // "ok a=123456789" = 14
        assert!(!rw.overflowed());
        rw.field_str("b", "1"); // would be 18
        assert!(rw.overflowed());
        rw.word("x"); // ignored even though it would fit
        assert_eq!(rw.line(), "ok a=123456789");
        assert_eq!(rw.finish(), Err(ReplyError::TooLong));
        assert!(!rw.overflowed());
        rw.err(400, "reply too long"); // 18 > 15: also overflows
        assert_eq!(rw.finish(), Err(ReplyError::TooLong));
        rw.err(400, "long");
        rw.finish().unwrap();
        // A multi-byte spelling that does not fit is dropped whole.
        rw.ok().word("123456789λ");
        assert!(rw.overflowed());
        assert_eq!(rw.line(), "ok");
    }
    assert_eq!(sink.text(), "err 400 long\n");
    // Zero capacity never panics.
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::<_, 0>::with_line_length(&mut sink, true);
    rw.ok();
    assert_eq!(rw.finish(), Err(ReplyError::TooLong));
}

#[test]
fn cut_text_never_overflows() {
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::<_, 20>::with_line_length(&mut sink, false);
    // Fits whole.
    rw.err(407, "k");
    assert!(rw.text_cut("- ok"));
    assert_eq!(rw.line(), "err 407 k - ok");
    assert!(rw.text_cut(""));
    assert_eq!(rw.line(), "err 407 k - ok");
    // A spelling is never split: "°" is "deg", of which only "d" would fit.
    rw.err(407, "k");
    assert!(!rw.text_cut("1234°"));
    assert_eq!(rw.line(), "err 407 k 12...");
    assert!(!rw.overflowed());
    assert!(!rw.text_cut("x")); // full: nothing more, not even a space
    assert_eq!(rw.line(), "err 407 k 12...");
    rw.err(407, "k");
    assert!(!rw.text_cut("ab±cd"));
    assert_eq!(rw.line(), "err 407 k ab...");
    assert_eq!(rw.remaining(), 0);
    rw.finish().unwrap();
    // Exactly full without the ellipsis still fits whole.
    rw.err(407, "k");
    assert!(rw.text_cut("12345"));
    assert_eq!(rw.line().len(), 15);
    assert!(!rw.text_cut("1")); // no room for a space
    assert_eq!(rw.line(), "err 407 k 12345");
    rw.finish().unwrap();
    // An overflowed line takes nothing.
    rw.ok().word("0123456789abcdef");
    assert!(rw.overflowed());
    assert!(!rw.text_cut("x"));
    assert_eq!(rw.finish(), Err(ReplyError::TooLong));
    assert_eq!(sink.text(), "err 407 k ab...\nerr 407 k 12345\n");
    // Zero capacity never panics.
    let mut sink = Sink::new();
    let mut rw = ReplyWriter::<_, 0>::with_line_length(&mut sink, false);
    assert!(!rw.text_cut("x"));
    assert_eq!(rw.remaining(), 0);
}

#[test]
fn echoes_are_safe_and_cut() {
    let e = Echo::<4>::new("");
    assert!(e.is_empty() && !e.is_cut());
    assert_eq!(Echo::<4>::new("abcd").as_str(), "abcd");
    assert!(!Echo::<4>::new("abcd").is_cut());
    let e = Echo::<4>::new("abcde");
    assert_eq!((e.as_str(), e.is_cut()), ("abcd", true));
    // One `?` per character, whatever its UTF-8 length.
    assert_eq!(Echo::<8>::new("é☃\u{0}\u{7f} \r\n").as_str(), "???????");
    assert_eq!(Echo::<0>::new("x").as_str(), "");
    assert!(Echo::<0>::new("x").is_cut());
}

#[test]
fn writer_errors_propagate() {
    let mut sink = Sink::new();
    sink.limit = 4;
    let mut rw = ReplyWriter::new(&mut sink, false);
    rw.ok().field_i32("n", 12345);
    assert_eq!(rw.finish(), Err(ReplyError::Io(BROKEN)));
    assert_eq!(rw.line(), "");
    let mut sink = Sink::new();
    sink.limit = 4;
    sink.zero = true;
    let mut rw = ReplyWriter::new(&mut sink, false);
    rw.ok().field_i32("n", 12345);
    assert_eq!(rw.finish(), Err(ReplyError::WriteZero));
    assert_eq!(rw.flush(), Ok(()));
}
