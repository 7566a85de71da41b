//! Splitting a request line into a command word and its arguments.
//!
//! A request body (the line without its checksum suffix, see [`crate::console::crc`])
//! is a sequence of tokens separated by one or more spaces or tabs; leading and trailing
//! blanks are ignored. The first token is the command word; every further token is an
//! argument, either
//!
//! * `key=value` — split at the first `=`; the value is everything after it (it may
//!   hold further `=`) and must not be empty; or
//! * positional — any token without `=`.
//!
//! The command word and keys are *words*: lower-case ASCII letters, digits, `_` and `-`,
//! starting with a letter; they are case-sensitive (`Pos` is not `pos`). Positional and
//! keyed arguments may be interleaved; positional indices count positional arguments
//! only. At most [`MAX_ARGS`] arguments; a key may appear only once. A line that breaks
//! these rules is a [`TokenError`]; [`Args::parse_detailed`] also names the token at
//! fault ([`TokenFault`]), so that the error reply can quote it.
//!
//! Reading an argument ([`Args::get`], [`Args::positional`]) marks it used; after reading
//! what it understands, a command calls [`Args::check_all_used`] to reject unknown or
//! extra arguments.
//!
//! ```
//! use matterwave_core::console::token::{Args, TokenError};
//! let mut args = Args::parse("move arm 12.5 speed=2").unwrap();
//! assert_eq!(args.command(), "move");
//! assert_eq!(args.positional(0), Some("arm"));
//! assert_eq!(args.positional(1), Some("12.5"));
//! assert_eq!(args.check_all_used(), Err(TokenError::Unused));
//! assert_eq!(args.first_unused(), Some("speed=2"));
//! assert_eq!(args.get("speed"), Some("2"));
//! assert_eq!(args.check_all_used(), Ok(()));
//! ```

/// The most arguments (tokens after the command word) a request may have.
pub const MAX_ARGS: usize = 12;

/// Why a request line could not be split.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TokenError {
    /// The line holds no tokens.
    NoCommand,
    /// The command word is not a lower-case word.
    BadCommand,
    /// A `key=value` token whose key is empty or not a lower-case word.
    BadKey,
    /// A `key=` token with nothing after the `=`.
    EmptyValue,
    /// More than [`MAX_ARGS`] arguments.
    TooMany,
    /// The same key given twice.
    DuplicateKey,
    /// An argument the command did not read (unknown key or extra positional).
    Unused,
}

impl TokenError {
    /// A short message for an error reply.
    pub const fn message(self) -> &'static str {
        match self {
            TokenError::NoCommand => "no command word",
            TokenError::BadCommand => "command words are lower-case letters, digits, _ and -",
            TokenError::BadKey => "bad key: keys are lower-case words, as in key=value",
            TokenError::EmptyValue => "key= needs a value",
            TokenError::TooMany => "too many arguments",
            TokenError::DuplicateKey => "the same key is given twice",
            TokenError::Unused => "unknown or extra argument",
        }
    }
}

/// A [`TokenError`] of [`Args::parse_detailed`] and the token it is about, borrowed from
/// the line, so that a reply can name it.
///
/// The token is the one at fault, as written: the command word for
/// [`TokenError::BadCommand`], the whole `key=value` token for [`TokenError::BadKey`],
/// [`TokenError::EmptyValue`] and [`TokenError::DuplicateKey`] (its second occurrence),
/// the first argument beyond [`MAX_ARGS`] for [`TokenError::TooMany`], and the empty
/// string for [`TokenError::NoCommand`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TokenFault<'a> {
    /// What is wrong.
    pub error: TokenError,
    /// The token at fault (see the type's docs).
    pub token: &'a str,
}

impl<'a> TokenFault<'a> {
    /// The key of a `key=value` token (the part before the first `=`), if it has one.
    ///
    /// ```
    /// # use matterwave_core::console::token::{Args, TokenError};
    /// let f = Args::parse_detailed("set energy=1 energy=2").unwrap_err();
    /// assert_eq!(f.error, TokenError::DuplicateKey);
    /// assert_eq!((f.token, f.key(), f.value()), ("energy=2", Some("energy"), Some("2")));
    /// ```
    pub fn key(&self) -> Option<&'a str> {
        self.token.split_once('=').map(|(k, _)| k)
    }

    /// The value of a `key=value` token (the part after the first `=`), if it has one.
    pub fn value(&self) -> Option<&'a str> {
        self.token.split_once('=').map(|(_, v)| v)
    }
}

/// One argument of a request.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Arg<'a> {
    /// A token without `=`.
    Positional(&'a str),
    /// A `key=value` token.
    Keyed {
        /// The part before the first `=`.
        key: &'a str,
        /// The part after the first `=` (non-empty).
        value: &'a str,
    },
}

/// Whether `s` is a protocol word: `[a-z][a-z0-9_-]*`.
pub fn is_word(s: &str) -> bool {
    let b = s.as_bytes();
    match b.split_first() {
        Some((first, rest)) => {
            first.is_ascii_lowercase()
                && rest.iter().all(|c| {
                    c.is_ascii_lowercase() || c.is_ascii_digit() || *c == b'_' || *c == b'-'
                })
        }
        None => false,
    }
}

/// A request split into its command word and arguments; borrows the line.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Args<'a> {
    command: &'a str,
    args: [Arg<'a>; MAX_ARGS],
    /// Each argument's original token text, for messages.
    raw: [&'a str; MAX_ARGS],
    len: usize,
    /// Bit i set: argument i has been read.
    used: u16,
}

impl<'a> Args<'a> {
    /// Split a request body. See the [module docs](self) for the rules.
    ///
    /// ```
    /// # use matterwave_core::console::token::{Args, TokenError};
    /// assert_eq!(Args::parse("  ").err(), Some(TokenError::NoCommand));
    /// assert_eq!(Args::parse("Pos").err(), Some(TokenError::BadCommand));
    /// assert_eq!(Args::parse("go a=1 a=2").err(), Some(TokenError::DuplicateKey));
    /// assert_eq!(Args::parse("go a=").err(), Some(TokenError::EmptyValue));
    /// assert_eq!(Args::parse("go =1").err(), Some(TokenError::BadKey));
    /// ```
    pub fn parse(line: &'a str) -> Result<Self, TokenError> {
        Self::parse_detailed(line).map_err(|f| f.error)
    }

    /// [`Args::parse`], and on failure the token at fault beside the error.
    ///
    /// ```
    /// # use matterwave_core::console::token::{Args, TokenError, TokenFault};
    /// let f = Args::parse_detailed("go Arm=1").unwrap_err();
    /// assert_eq!(f, TokenFault { error: TokenError::BadKey, token: "Arm=1" });
    /// let f = Args::parse_detailed("go 1 2 3 4 5 6 7 8 9 10 11 12 13 14").unwrap_err();
    /// assert_eq!(f, TokenFault { error: TokenError::TooMany, token: "13" });
    /// ```
    pub fn parse_detailed(line: &'a str) -> Result<Self, TokenFault<'a>> {
        let fault = |error, token| TokenFault { error, token };
        let mut tokens = line.split([' ', '\t']).filter(|t| !t.is_empty());
        let command = tokens.next().ok_or(fault(TokenError::NoCommand, ""))?;
        if !is_word(command) {
            return Err(fault(TokenError::BadCommand, command));
        }
        let mut args = [Arg::Positional(""); MAX_ARGS];
        let mut raw = [""; MAX_ARGS];
        let mut len = 0usize;
        for token in tokens {
            let arg = match token.split_once('=') {
                None => Arg::Positional(token),
                Some((key, value)) => {
                    if !is_word(key) {
                        return Err(fault(TokenError::BadKey, token));
                    }
                    if value.is_empty() {
                        return Err(fault(TokenError::EmptyValue, token));
                    }
                    let seen = args.iter().take(len).any(|a| match a {
                        Arg::Keyed { key: k, .. } => *k == key,
                        Arg::Positional(_) => false,
                    });
                    if seen {
                        return Err(fault(TokenError::DuplicateKey, token));
                    }
                    Arg::Keyed { key, value }
                }
            };
            let (Some(slot), Some(raw_slot)) = (args.get_mut(len), raw.get_mut(len)) else {
                return Err(fault(TokenError::TooMany, token));
            };
            *slot = arg;
            *raw_slot = token;
            len += 1;
        }
        Ok(Self {
            command,
            args,
            raw,
            len,
            used: 0,
        })
    }

    /// The command word.
    pub fn command(&self) -> &'a str {
        self.command
    }

    /// Number of arguments after the command word.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Whether there are no arguments.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Number of positional arguments.
    pub fn positional_count(&self) -> usize {
        self.all()
            .filter(|a| matches!(a, Arg::Positional(_)))
            .count()
    }

    /// Every argument in order, without marking any used.
    pub fn all(&self) -> impl Iterator<Item = Arg<'a>> + '_ {
        self.args.iter().take(self.len).copied()
    }

    fn mark(&mut self, index: usize) {
        if let Some(bit) = 1u16.checked_shl(index as u32) {
            self.used |= bit;
        }
    }

    /// The value of `key`, marking it used; `None` if absent.
    pub fn get(&mut self, key: &str) -> Option<&'a str> {
        let (index, value) = self.all().enumerate().find_map(|(i, a)| match a {
            Arg::Keyed { key: k, value } if k == key => Some((i, value)),
            _ => None,
        })?;
        self.mark(index);
        Some(value)
    }

    /// Whether `key` is present, without marking it used.
    pub fn has(&self, key: &str) -> bool {
        self.all()
            .any(|a| matches!(a, Arg::Keyed { key: k, .. } if k == key))
    }

    /// Positional argument `i` (0-based, counting positional arguments only), marking it
    /// used; `None` if there are not that many.
    pub fn positional(&mut self, i: usize) -> Option<&'a str> {
        let (index, value) = self
            .all()
            .enumerate()
            .filter_map(|(n, a)| match a {
                Arg::Positional(v) => Some((n, v)),
                Arg::Keyed { .. } => None,
            })
            .nth(i)?;
        self.mark(index);
        Some(value)
    }

    /// The first argument not yet read, as written in the request.
    pub fn first_unused(&self) -> Option<&'a str> {
        (0..self.len)
            .find(|&i| {
                1u16.checked_shl(i as u32)
                    .is_some_and(|bit| self.used & bit == 0)
            })
            .and_then(|i| self.raw.get(i).copied())
    }

    /// `Err(TokenError::Unused)` if any argument has not been read.
    pub fn check_all_used(&self) -> Result<(), TokenError> {
        match self.first_unused() {
            Some(_) => Err(TokenError::Unused),
            None => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words() {
        assert!(is_word("pos"));
        assert!(is_word("set-zero_2"));
        for bad in ["", "Pos", "2pos", "_x", "-x", "pös", "a.b", "a b"] {
            assert!(!is_word(bad), "{bad}");
        }
    }

    #[test]
    fn splitting() {
        let mut a = Args::parse("\t go  arm \t12.5 speed=2 name=a=b  ").unwrap();
        assert_eq!(a.command(), "go");
        assert_eq!(a.len(), 4);
        assert_eq!(a.positional_count(), 2);
        assert!(a.has("speed"));
        assert!(!a.has("arm"));
        assert_eq!(a.get("name"), Some("a=b"));
        assert_eq!(a.get("missing"), None);
        assert_eq!(a.positional(2), None);
        assert_eq!(a.first_unused(), Some("arm"));
        assert_eq!(a.positional(1), Some("12.5"));
        assert_eq!(a.positional(0), Some("arm"));
        assert_eq!(a.first_unused(), Some("speed=2"));
        assert_eq!(a.get("speed"), Some("2"));
        assert_eq!(a.check_all_used(), Ok(()));
        let b = Args::parse("stop").unwrap();
        assert!(b.is_empty());
        assert_eq!(b.check_all_used(), Ok(()));
    }

    #[test]
    fn errors() {
        assert_eq!(Args::parse("").err(), Some(TokenError::NoCommand));
        assert_eq!(Args::parse("x=1").err(), Some(TokenError::BadCommand));
        assert_eq!(Args::parse("go Arm=1").err(), Some(TokenError::BadKey));
        assert_eq!(Args::parse("go =").err(), Some(TokenError::BadKey));
        assert_eq!(Args::parse("go k=").err(), Some(TokenError::EmptyValue));
        assert_eq!(
            Args::parse("go k=1 j=2 k=3").err(),
            Some(TokenError::DuplicateKey)
        );
    }

    #[test]
    fn faults_name_their_token() {
        let f = |l| Args::parse_detailed(l).unwrap_err();
        assert_eq!(f(" \t").token, "");
        assert_eq!(f("x=1 y").token, "x=1");
        assert_eq!(f("go a=1 =2").token, "=2");
        assert_eq!(f("go a=1 b=").token, "b=");
        assert_eq!(f("go b=").key(), Some("b"));
        assert_eq!(f("go b=").value(), Some(""));
        assert_eq!(f("go a=1 b a=x=y").token, "a=x=y");
        assert_eq!(f("go a=1 b a=x=y").value(), Some("x=y"));
        assert_eq!(f("Go").key(), None);
        // A line over the limit names the first argument that did not fit.
        assert_eq!(f("go 1 2 3 4 5 6 7 8 9 10 11 12 x=13 14").token, "x=13");
        // Whatever `parse_detailed` says, `parse` says the same kind.
        for l in [
            "",
            "Go",
            "go A=1",
            "go a=",
            "go a=1 a=1",
            "go 1 2 3 4 5 6 7 8 9 10 11 12 13",
        ] {
            assert_eq!(Args::parse(l).err(), Some(f(l).error), "{l}");
        }
    }

    #[test]
    fn argument_limit() {
        let twelve = "go 1 2 3 4 5 6 7 8 9 10 11 12";
        let mut a = Args::parse(twelve).unwrap();
        for i in 0..MAX_ARGS {
            assert!(a.positional(i).is_some());
        }
        assert_eq!(a.check_all_used(), Ok(()));
        assert_eq!(
            Args::parse("go 1 2 3 4 5 6 7 8 9 10 11 12 13").err(),
            Some(TokenError::TooMany)
        );
    }
}
