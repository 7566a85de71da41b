//! Reading single TOML values for rig-file messages: a number that must be finite, and
//! a short description of whatever was found instead ("got …").

use toml::Value;

/// A TOML number (integer or float) as f64 when it is finite; else the message,
/// "must be a (finite) number (UNIT), got …".
pub(crate) fn finite_number(v: &Value, unit: &str) -> Result<f64, String> {
    let x = match v {
        Value::Float(x) => *x,
        Value::Integer(n) => *n as f64,
        other => {
            return Err(format!(
                "must be a number ({unit}), got {}",
                describe(other)
            ))
        }
    };
    if x.is_finite() {
        Ok(x)
    } else {
        Err(format!("must be a finite number ({unit}), got {x}"))
    }
}

/// A short description of a TOML value for "got …" in messages.
pub(crate) fn describe(v: &Value) -> String {
    match v {
        Value::String(s) => format!("string {s:?}"),
        Value::Integer(n) => n.to_string(),
        Value::Float(x) => x.to_string(),
        Value::Boolean(b) => format!("boolean {b}"),
        Value::Datetime(d) => format!("date-time {d}"),
        Value::Array(items) => {
            let parts: Vec<String> = items.iter().map(describe).collect();
            format!("[{}]", parts.join(", "))
        }
        Value::Table(_) => "a table".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_descriptions() {
        assert_eq!(finite_number(&Value::Integer(3), "K"), Ok(3.0));
        assert_eq!(finite_number(&Value::Float(2.5), "K"), Ok(2.5));
        assert_eq!(
            finite_number(&Value::Float(f64::NAN), "K"),
            Err("must be a finite number (K), got NaN".to_string())
        );
        assert_eq!(
            finite_number(&Value::String("3".into()), "K"),
            Err("must be a number (K), got string \"3\"".to_string())
        );
        let v: Value = Value::Array(vec![Value::Boolean(true), Value::Integer(-1)]);
        assert_eq!(describe(&v), "[boolean true, -1]");
    }
}
