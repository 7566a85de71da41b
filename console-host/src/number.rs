//! Numbers on the command line: every f32 option is read by [`f32_arg`] (and every
//! `--max` by [`max_arg`]), which echoes
//! what was typed and says what is wrong (a unit or other text, an infinity, a value
//! beyond the f32 range), instead of Rust's "invalid float literal" or a silent `inf`.

/// Reads an f32 option's value: a plain decimal or exponent number (`95`, `-1.5`,
/// `2e3`) that is finite and within the f32 range (±3.4028235e38). The error (without
/// the option's name, which the parser adds, nor what the option accepts, which its
/// help gives) quotes the text as typed.
///
/// ```
/// use matterwave_console::number::f32_arg;
/// assert_eq!(f32_arg("95"), Ok(95.0));
/// assert!(f32_arg("1e39").unwrap_err().contains("beyond the f32 range"));
/// assert!(f32_arg("100eV").unwrap_err().contains("not a number"));
/// ```
pub fn f32_arg(s: &str) -> Result<f32, String> {
    let t = s.trim();
    let plain = !t.is_empty()
        && t.bytes()
            .all(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.' | b'e' | b'E'));
    let wide: f64 = match t.parse::<f64>() {
        Ok(x) if plain => x,
        Ok(_) => {
            return Err(format!(
                "'{s}' is not a finite number; give plain digits such as 100, -2.5 or 1.5e3"
            ))
        }
        Err(_) => {
            return Err(format!(
            "'{s}' is not a number; give plain digits such as 100, -2.5 or 1.5e3, without a unit"
        ))
        }
    };
    if wide.abs() > f64::from(f32::MAX) {
        return Err(format!(
            "'{s}' is beyond the f32 range (magnitude at most {:e}), far beyond what any option accepts",
            f32::MAX
        ));
    }
    Ok(wide as f32)
}

/// Most rows a `--max` accepts.
pub const MAX_ROWS: usize = 10_000;

/// Reads a `--max` count: a whole number from 1 to [`MAX_ROWS`]; the error quotes the
/// text as typed (instead of Rust's "invalid digit found in string").
///
/// ```
/// use matterwave_console::number::max_arg;
/// assert_eq!(max_arg("20"), Ok(20));
/// assert!(max_arg("-1").unwrap_err().contains("'-1' is not a count"));
/// ```
pub fn max_arg(s: &str) -> Result<usize, String> {
    match s.trim().parse::<usize>() {
        Ok(n) if (1..=MAX_ROWS).contains(&n) => Ok(n),
        _ => Err(format!(
            "'{s}' is not a count from 1 to {MAX_ROWS}; give a whole number such as 20"
        )),
    }
}
