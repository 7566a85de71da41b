//! Output formats: aligned table (default), JSON and CSV, from one report structure.
//!
//! A [`Report`] has scalar fields and at most one list. JSON puts the fields at the top
//! level and the list under its key; CSV prints the list (or, with no list, the fields
//! as one row) with JSON keys as the header; the table prints the fields as aligned
//! `name: value` lines and the list with units in the column headers. Floats computed in
//! f32 are written in JSON and CSV with the shortest decimal that reads back to the same
//! f32; the table rounds to a per-column number of decimals.

use std::fmt::Write as _;

/// Output format chosen with `--format`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Aligned columns with units in the headers.
    Table,
    /// One JSON object.
    Json,
    /// Comma-separated values with a header row.
    Csv,
}

/// One value.
#[derive(Clone, Debug, PartialEq)]
pub enum Value {
    /// An f32 result, shown in tables with this many decimals.
    F32(f32, usize),
    /// An f64 result, shown in tables with this many decimals.
    F64(f64, usize),
    /// An integer.
    Int(i64),
    /// Text.
    Text(String),
    /// A yes/no (JSON boolean, `true`/`false` in CSV and tables).
    Bool(bool),
    /// A list (JSON array; items joined by spaces in CSV and tables).
    List(Vec<Value>),
    /// No value (JSON null, empty in CSV, `-` in tables).
    Missing,
}

impl Value {
    /// `Some(x)` as F32 with `dec` decimals, `None` as Missing.
    pub fn opt(x: Option<f32>, dec: usize) -> Value {
        x.map_or(Value::Missing, |v| Value::F32(v, dec))
    }

    fn json(&self) -> serde_json::Value {
        match self {
            Value::F32(x, _) => f32_json(*x),
            Value::F64(x, _) => serde_json::Number::from_f64(*x)
                .map_or(serde_json::Value::Null, serde_json::Value::Number),
            Value::Int(i) => serde_json::Value::from(*i),
            Value::Text(s) => serde_json::Value::from(s.as_str()),
            Value::Bool(b) => serde_json::Value::Bool(*b),
            Value::List(v) => serde_json::Value::Array(v.iter().map(Value::json).collect()),
            Value::Missing => serde_json::Value::Null,
        }
    }

    fn plain(&self) -> String {
        match self {
            Value::F32(x, _) => format!("{x}"),
            Value::F64(x, _) => format!("{x}"),
            Value::Int(i) => i.to_string(),
            Value::Text(s) => s.clone(),
            Value::Bool(b) => b.to_string(),
            Value::List(v) => join_items(v, Value::plain),
            Value::Missing => String::new(),
        }
    }

    fn shown(&self) -> String {
        match self {
            Value::F32(x, d) => format!("{x:.d$}", d = *d),
            Value::F64(x, d) => format!("{x:.d$}", d = *d),
            Value::Int(i) => i.to_string(),
            Value::Text(s) => s.clone(),
            Value::Bool(b) => b.to_string(),
            Value::List(v) => join_items(v, Value::shown),
            Value::Missing => "-".to_string(),
        }
    }

    fn is_text(&self) -> bool {
        matches!(self, Value::Text(_) | Value::Bool(_) | Value::List(_))
    }
}

/// The items of a list joined by spaces (by `; ` when an item has a space of its own);
/// an item that is itself a list is bracketed (`[-12, 12] [120, 128]`).
fn join_items(items: &[Value], each: fn(&Value) -> String) -> String {
    let wordy = items
        .iter()
        .any(|v| matches!(v, Value::Text(t) if t.contains(' ')));
    items
        .iter()
        .map(|v| match v {
            Value::List(inner) => {
                let parts: Vec<String> = inner.iter().map(each).collect();
                format!("[{}]", parts.join(", "))
            }
            other => each(other),
        })
        .collect::<Vec<_>>()
        .join(if wordy { "; " } else { " " })
}

/// Shortest decimal that reads back to the same f32, as a JSON number.
pub fn f32_json(x: f32) -> serde_json::Value {
    if !x.is_finite() {
        return serde_json::Value::Null;
    }
    let s = format!("{x}");
    match s.parse::<f64>() {
        Ok(v) => serde_json::Number::from_f64(v)
            .map_or(serde_json::Value::Null, serde_json::Value::Number),
        Err(_) => serde_json::Value::Null,
    }
}

/// Pretty-printed JSON ending with a newline.
pub(crate) fn json_text(v: &serde_json::Value) -> String {
    let mut s = serde_json::to_string_pretty(v).unwrap_or_default();
    s.push('\n');
    s
}

/// A column of a list: JSON/CSV key and table header (with unit).
#[derive(Clone, Copy, Debug)]
pub struct Column {
    /// Key in JSON and CSV.
    pub key: &'static str,
    /// Header in the table, with its unit.
    pub header: &'static str,
}

/// Shorthand for a [`Column`].
pub const fn col(key: &'static str, header: &'static str) -> Column {
    Column { key, header }
}

/// A list of rows under one key.
#[derive(Clone, Debug, Default)]
pub struct List {
    /// Key of the list in JSON (e.g. `beams`).
    pub key: &'static str,
    /// Columns.
    pub columns: Vec<Column>,
    /// Rows, each as long as `columns`.
    pub rows: Vec<Vec<Value>>,
}

/// A command's result.
#[derive(Clone, Debug, Default)]
pub struct Report {
    /// Scalar fields: (key, label with unit, value).
    pub fields: Vec<(&'static str, &'static str, Value)>,
    /// The list, if any.
    pub list: Option<List>,
    /// Notes printed under a table (not in JSON or CSV).
    pub notes: Vec<String>,
}

impl Report {
    /// Adds a scalar field.
    pub fn field(&mut self, key: &'static str, label: &'static str, v: Value) -> &mut Self {
        self.fields.push((key, label, v));
        self
    }

    /// Renders in `format`; the result ends with a newline.
    pub fn render(&self, format: Format) -> String {
        match format {
            Format::Json => self.render_json(),
            Format::Csv => self.render_csv(),
            Format::Table => self.render_table(),
        }
    }

    /// The JSON value of the report.
    pub fn to_json(&self) -> serde_json::Value {
        let mut m = serde_json::Map::new();
        for (k, _, v) in &self.fields {
            m.insert((*k).to_string(), v.json());
        }
        if let Some(l) = &self.list {
            let rows = l
                .rows
                .iter()
                .map(|r| {
                    let mut o = serde_json::Map::new();
                    for (c, v) in l.columns.iter().zip(r) {
                        o.insert(c.key.to_string(), v.json());
                    }
                    serde_json::Value::Object(o)
                })
                .collect();
            m.insert(l.key.to_string(), serde_json::Value::Array(rows));
        }
        serde_json::Value::Object(m)
    }

    fn render_json(&self) -> String {
        json_text(&self.to_json())
    }

    fn render_csv(&self) -> String {
        let mut out = String::new();
        let quote = |s: String| {
            if s.contains([',', '"', '\n']) {
                format!("\"{}\"", s.replace('"', "\"\""))
            } else {
                s
            }
        };
        match &self.list {
            Some(l) => {
                let head: Vec<_> = l.columns.iter().map(|c| c.key.to_string()).collect();
                let _ = writeln!(out, "{}", head.join(","));
                for r in &l.rows {
                    let cells: Vec<_> = r.iter().map(|v| quote(v.plain())).collect();
                    let _ = writeln!(out, "{}", cells.join(","));
                }
            }
            None => {
                let head: Vec<_> = self.fields.iter().map(|f| f.0.to_string()).collect();
                let vals: Vec<_> = self.fields.iter().map(|f| quote(f.2.plain())).collect();
                let _ = writeln!(out, "{}", head.join(","));
                let _ = writeln!(out, "{}", vals.join(","));
            }
        }
        out
    }

    fn render_table(&self) -> String {
        let mut out = String::new();
        let w = self
            .fields
            .iter()
            .map(|f| f.1.chars().count())
            .max()
            .unwrap_or(0);
        for (_, label, v) in &self.fields {
            let pad = w - label.chars().count();
            let _ = writeln!(out, "{label}:{:pad$} {}", "", v.shown());
        }
        if let Some(l) = &self.list {
            if !self.fields.is_empty() {
                out.push('\n');
            }
            let cells: Vec<Vec<String>> = l
                .rows
                .iter()
                .map(|r| r.iter().map(Value::shown).collect())
                .collect();
            let mut widths: Vec<usize> =
                l.columns.iter().map(|c| c.header.chars().count()).collect();
            for r in &cells {
                for (i, c) in r.iter().enumerate() {
                    widths[i] = widths[i].max(c.chars().count());
                }
            }
            let text_col: Vec<bool> = (0..l.columns.len())
                .map(|i| l.rows.first().is_some_and(|r| r[i].is_text()))
                .collect();
            let line = |out: &mut String, items: &[String]| {
                let mut parts = Vec::new();
                for (i, s) in items.iter().enumerate() {
                    let pad = widths[i] - s.chars().count();
                    if text_col[i] {
                        parts.push(format!("{s}{:pad$}", ""));
                    } else {
                        parts.push(format!("{:pad$}{s}", ""));
                    }
                }
                let _ = writeln!(out, "{}", parts.join("  ").trim_end());
            };
            let head: Vec<String> = l.columns.iter().map(|c| c.header.to_string()).collect();
            line(&mut out, &head);
            for r in &cells {
                line(&mut out, r);
            }
            if l.rows.is_empty() {
                let _ = writeln!(out, "(none)");
            }
        }
        for n in &self.notes {
            let _ = writeln!(out, "{n}");
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn f32_values_print_shortest() {
        assert_eq!(f32_json(0.037014).to_string(), "0.037014");
        assert_eq!(f32_json(f32::NAN), serde_json::Value::Null);
    }

    #[test]
    fn csv_quotes_commas() {
        let mut r = Report::default();
        r.field("name", "Name", Value::Text("a,b".into()));
        assert_eq!(r.render(Format::Csv), "name\n\"a,b\"\n");
    }
}
