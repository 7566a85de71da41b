//! CRC-16/IBM-3740 (often called CRC-16/CCITT-FALSE) and the optional line checksum.
//!
//! Parameters: width 16, polynomial 0x1021, initial value 0xFFFF, no input or output
//! reflection, no final XOR; check value (CRC of the ASCII bytes `123456789`) 0x29B1.
//! The implementation uses a 16-entry nibble table (32 bytes of flash).
//!
//! # Line checksum convention
//!
//! Any line — request or reply — may end with a checksum suffix `*XXXX`: a `*` followed
//! by exactly four hex digits (upper or lower case on input; replies use upper case).
//! `XXXX` is the CRC of every byte of the line before the `*` (the terminator is not part
//! of the line). The `*` is reserved for this: a line holds at most one `*`, and only as
//! the start of the 5-byte suffix at its very end. If a request carries a checksum, its
//! replies carry one too.
//!
//! ```
//! use matterwave_core::console::crc;
//! assert_eq!(crc::crc16(b"123456789"), 0x29B1);
//! let line = "pos*A1E3";
//! assert_eq!(crc::split_checksum(line), Ok(("pos", Some(0xA1E3))));
//! let good = crc::suffix_for(b"pos");
//! let mut full = [0u8; 8];
//! full[..3].copy_from_slice(b"pos");
//! full[3..].copy_from_slice(&good);
//! let full = core::str::from_utf8(&full).unwrap();
//! assert_eq!(crc::verify(full), Ok(("pos", true)));
//! assert_eq!(crc::verify("pos"), Ok(("pos", false)));
//! ```

/// The generator polynomial 0x1021 (x^16 + x^12 + x^5 + 1).
pub const POLY: u16 = 0x1021;
/// The initial register value.
pub const INIT: u16 = 0xFFFF;
/// Length of the line checksum suffix `*XXXX` in bytes.
pub const SUFFIX_LEN: usize = 5;

/// CRC of the top nibble of the register, shifted out one nibble at a time.
const NIBBLE_TABLE: [u16; 16] = nibble_table();

const fn nibble_table() -> [u16; 16] {
    let mut table = [0u16; 16];
    let mut i = 0;
    while i < 16 {
        let mut r = (i as u16) << 12;
        let mut bit = 0;
        while bit < 4 {
            r = if r & 0x8000 != 0 {
                (r << 1) ^ POLY
            } else {
                r << 1
            };
            bit += 1;
        }
        // `i < 16` is the loop condition: the index is in bounds (const fn, checked at
        // compile time).
        #[allow(clippy::indexing_slicing)]
        {
            table[i] = r;
        }
        i += 1;
    }
    table
}

/// Advance the register by one nibble (low 4 bits of `nibble`).
#[inline]
fn step(crc: u16, nibble: u8) -> u16 {
    let index = ((crc >> 12) ^ u16::from(nibble & 0x0F)) & 0x0F;
    // `index` is masked to 0..=15, so the lookup always hits; 0 is never used.
    (crc << 4) ^ NIBBLE_TABLE.get(usize::from(index)).copied().unwrap_or(0)
}

/// CRC-16/IBM-3740 of `bytes`.
///
/// ```
/// # use matterwave_core::console::crc::crc16;
/// assert_eq!(crc16(b""), 0xFFFF);
/// assert_eq!(crc16(b"123456789"), 0x29B1);
/// ```
pub fn crc16(bytes: &[u8]) -> u16 {
    let mut c = Crc16::new();
    c.update(bytes);
    c.value()
}

/// Incremental CRC-16/IBM-3740: feed pieces with [`Crc16::update`], read
/// [`Crc16::value`] at any time.
///
/// ```
/// # use matterwave_core::console::crc::{crc16, Crc16};
/// let mut c = Crc16::new();
/// c.update(b"1234");
/// c.update_byte(b'5');
/// c.update(b"6789");
/// assert_eq!(c.value(), crc16(b"123456789"));
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Crc16 {
    reg: u16,
}

impl Default for Crc16 {
    fn default() -> Self {
        Self::new()
    }
}

impl Crc16 {
    /// A fresh register (0xFFFF).
    pub const fn new() -> Self {
        Self { reg: INIT }
    }

    /// Feed one byte.
    #[inline]
    pub fn update_byte(&mut self, byte: u8) {
        self.reg = step(step(self.reg, byte >> 4), byte);
    }

    /// Feed bytes.
    pub fn update(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.update_byte(b);
        }
    }

    /// The CRC of everything fed so far (no final XOR for this CRC).
    pub const fn value(&self) -> u16 {
        self.reg
    }
}

/// A checksum suffix that is malformed or does not match.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ChecksumError {
    /// A `*` that does not start a `*XXXX` suffix (four hex digits) at the line's end,
    /// or more than one `*`.
    Malformed,
    /// The suffix is well formed but names a different CRC.
    Mismatch {
        /// The CRC the line claims.
        claimed: u16,
        /// The CRC of the bytes before the `*`.
        computed: u16,
    },
}

impl ChecksumError {
    /// A short message for an error reply.
    pub const fn message(self) -> &'static str {
        match self {
            ChecksumError::Malformed => {
                "malformed checksum: a line may end with *XXXX (4 hex digits)"
            }
            ChecksumError::Mismatch { .. } => "checksum mismatch: line corrupted, send it again",
        }
    }
}

/// Value of one hex digit, either case.
fn hex_value(b: u8) -> Option<u16> {
    match b {
        b'0'..=b'9' => Some(u16::from(b - b'0')),
        b'a'..=b'f' => Some(u16::from(b - b'a') + 10),
        b'A'..=b'F' => Some(u16::from(b - b'A') + 10),
        _ => None,
    }
}

/// Split a line into its body and its claimed checksum, without checking it.
///
/// `Ok((line, None))` if the line has no `*`; `Ok((body, Some(crc)))` if it ends with a
/// well-formed `*XXXX`; [`ChecksumError::Malformed`] for any other use of `*`.
///
/// ```
/// # use matterwave_core::console::crc::{split_checksum, ChecksumError};
/// assert_eq!(split_checksum("go arm=1"), Ok(("go arm=1", None)));
/// assert_eq!(split_checksum("go arm=1*00fF"), Ok(("go arm=1", Some(0x00FF))));
/// assert_eq!(split_checksum("go*12"), Err(ChecksumError::Malformed));
/// assert_eq!(split_checksum("a*b*1234"), Err(ChecksumError::Malformed));
/// ```
pub fn split_checksum(line: &str) -> Result<(&str, Option<u16>), ChecksumError> {
    let Some(star) = line.find('*') else {
        return Ok((line, None));
    };
    let (body, suffix) = line
        .split_at_checked(star)
        .ok_or(ChecksumError::Malformed)?;
    let digits = match suffix.as_bytes() {
        [b'*', a, b, c, d] => [*a, *b, *c, *d],
        _ => return Err(ChecksumError::Malformed),
    };
    let mut crc = 0u16;
    for d in digits {
        let v = hex_value(d).ok_or(ChecksumError::Malformed)?;
        crc = (crc << 4) | v;
    }
    Ok((body, Some(crc)))
}

/// Check a line's optional checksum: `Ok((body, had_checksum))`, where `body` is the line
/// without its suffix.
///
/// ```
/// # use matterwave_core::console::crc::{verify, ChecksumError};
/// assert_eq!(verify("123456789*29b1"), Ok(("123456789", true)));
/// assert_eq!(
///     verify("123456789*29B2"),
///     Err(ChecksumError::Mismatch { claimed: 0x29B2, computed: 0x29B1 })
/// );
/// ```
pub fn verify(line: &str) -> Result<(&str, bool), ChecksumError> {
    match split_checksum(line)? {
        (body, None) => Ok((body, false)),
        (body, Some(claimed)) => {
            let computed = crc16(body.as_bytes());
            if computed == claimed {
                Ok((body, true))
            } else {
                Err(ChecksumError::Mismatch { claimed, computed })
            }
        }
    }
}

/// Four upper-case hex digits of `value`.
pub fn hex4(value: u16) -> [u8; 4] {
    const DIGITS: &[u8; 16] = b"0123456789ABCDEF";
    let mut out = [0u8; 4];
    for (i, slot) in out.iter_mut().enumerate() {
        let shift = 12u32.saturating_sub(4 * i as u32);
        *slot = DIGITS
            .get(usize::from((value >> shift) & 0x0F))
            .copied()
            .unwrap_or(b'0');
    }
    out
}

/// The suffix `*XXXX` (upper-case hex) to append to a line whose bytes are `body`.
///
/// ```
/// # use matterwave_core::console::crc::suffix_for;
/// assert_eq!(&suffix_for(b"123456789"), b"*29B1");
/// ```
pub fn suffix_for(body: &[u8]) -> [u8; SUFFIX_LEN] {
    let [a, b, c, d] = hex4(crc16(body));
    [b'*', a, b, c, d]
}

/// Append the checksum suffix to `line` in place. All or nothing: if the 5 bytes do not
/// fit, `line` is unchanged and the capacity error is returned.
///
/// ```
/// # use matterwave_core::console::crc::{append_checksum, verify};
/// let mut s: heapless::String<16> = heapless::String::new();
/// s.push_str("ok").unwrap();
/// append_checksum(&mut s).unwrap();
/// assert_eq!(verify(&s), Ok(("ok", true)));
/// ```
pub fn append_checksum<const N: usize>(
    line: &mut heapless::String<N>,
) -> Result<(), heapless::CapacityError> {
    let suffix = suffix_for(line.as_bytes());
    // The suffix is ASCII, so this conversion always succeeds.
    let text = core::str::from_utf8(&suffix).map_err(|_| heapless::CapacityError::default())?;
    if line.capacity().saturating_sub(line.len()) < SUFFIX_LEN {
        return Err(heapless::CapacityError::default());
    }
    line.push_str(text)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Plain bitwise reference implementation of the same CRC.
    fn bitwise(bytes: &[u8]) -> u16 {
        let mut crc = INIT;
        for &b in bytes {
            crc ^= u16::from(b) << 8;
            for _ in 0..8 {
                crc = if crc & 0x8000 != 0 {
                    (crc << 1) ^ POLY
                } else {
                    crc << 1
                };
            }
        }
        crc
    }

    #[test]
    fn check_value() {
        // CRC catalogue (reveng), CRC-16/IBM-3740: check=0x29b1 (from memory).
        assert_eq!(crc16(b"123456789"), 0x29B1);
        assert_eq!(bitwise(b"123456789"), 0x29B1);
    }

    #[test]
    fn table_matches_bitwise() {
        let mut data = [0u8; 256];
        for (i, d) in data.iter_mut().enumerate() {
            *d = (i as u8).wrapping_mul(37).wrapping_add(11);
        }
        for n in 0..data.len() {
            assert_eq!(crc16(&data[..n]), bitwise(&data[..n]), "len {n}");
        }
        // Every single byte value.
        for b in 0..=255u8 {
            assert_eq!(crc16(&[b]), bitwise(&[b]));
        }
    }

    #[test]
    fn split_rules() {
        assert_eq!(split_checksum(""), Ok(("", None)));
        assert_eq!(split_checksum("*FFFF"), Ok(("", Some(0xFFFF))));
        assert_eq!(split_checksum("x *abcd"), Ok(("x ", Some(0xABCD))));
        for bad in [
            "x*", "x*1", "x*123", "x*12345", "x*12g4", "x*12 4", "x* 1234", "x*1234 ", "x**1234",
            "*12*34", "x*-123", "x*+123",
        ] {
            assert_eq!(split_checksum(bad), Err(ChecksumError::Malformed), "{bad}");
        }
    }

    #[test]
    fn verify_and_append() {
        let mut s: heapless::String<13> = heapless::String::new();
        s.push_str("st arm=1").unwrap();
        append_checksum(&mut s).unwrap();
        assert_eq!(s.len(), 13);
        assert_eq!(verify(&s), Ok(("st arm=1", true)));
        // One byte short of room: unchanged.
        let mut t: heapless::String<13> = heapless::String::new();
        t.push_str("st arm=12").unwrap();
        assert!(append_checksum(&mut t).is_err());
        assert_eq!(t.as_str(), "st arm=12");
        // A flipped bit in the body is caught.
        let mut line = [0u8; 13];
        line.copy_from_slice(s.as_bytes());
        line[3] ^= 0x01;
        let corrupted = core::str::from_utf8(&line).unwrap();
        assert!(matches!(
            verify(corrupted),
            Err(ChecksumError::Mismatch { .. })
        ));
    }

    #[test]
    fn hex_digits() {
        assert_eq!(&hex4(0x0000), b"0000");
        assert_eq!(&hex4(0x1234), b"1234");
        assert_eq!(&hex4(0xABCD), b"ABCD");
        assert_eq!(&hex4(0xF00F), b"F00F");
    }
}
