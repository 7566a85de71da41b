//! Output formats: aligned table (default), JSON and CSV, from one report structure.
//!
//! A [`Report`] has scalar fields and at most one list. JSON puts the fields at the top
//! level and the list under its key; CSV prints the list (or, with no list, the fields
//! as one row) with JSON keys as the header; the table prints the fields as aligned
//! `name: value` lines and the list with units in the column headers. Floats computed in
//! f32 are written in JSON and CSV with the shortest decimal that reads back to the same
//! f32; the table rounds to a per-column number of decimals.

use std::io::Write;

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
        let mut out = Vec::new();
        // Writing into a Vec cannot fail.
        let _ = self.write_to(format, &mut out);
        String::from_utf8_lossy(&out).into_owned()
    }

    /// Writes the report in `format` to `w` row by row, so a long list is never held as
    /// one string (a closed pipe ends it with the write error).
    pub fn write_to(&self, format: Format, w: &mut dyn Write) -> std::io::Result<()> {
        match format {
            Format::Json => self.write_json(w),
            Format::Csv => self.write_csv(w),
            Format::Table => self.write_table(w),
        }
    }

    /// The JSON value of the report.
    pub fn to_json(&self) -> serde_json::Value {
        let mut m = serde_json::Map::new();
        for (k, _, v) in &self.fields {
            m.insert((*k).to_string(), v.json());
        }
        if let Some(l) = &self.list {
            let rows = l.rows.iter().map(|r| l.row_json(r)).collect();
            m.insert(l.key.to_string(), serde_json::Value::Array(rows));
        }
        serde_json::Value::Object(m)
    }

    /// One JSON object, its list written one row at a time (the same text as
    /// [`json_text`] of [`Report::to_json`]).
    fn write_json(&self, w: &mut dyn Write) -> std::io::Result<()> {
        let indent = |v: &serde_json::Value, by: &str| -> String {
            let s = serde_json::to_string_pretty(v).unwrap_or_default();
            s.replace('\n', &format!("\n{by}"))
        };
        writeln!(w, "{{")?;
        let n_fields = self.fields.len();
        for (i, (k, _, v)) in self.fields.iter().enumerate() {
            let more = i + 1 < n_fields || self.list.is_some();
            let key = serde_json::Value::from(*k);
            writeln!(
                w,
                "  {key}: {}{}",
                indent(&v.json(), "  "),
                if more { "," } else { "" }
            )?;
        }
        if let Some(l) = &self.list {
            let key = serde_json::Value::from(l.key);
            if l.rows.is_empty() {
                writeln!(w, "  {key}: []")?;
            } else {
                writeln!(w, "  {key}: [")?;
                for (i, r) in l.rows.iter().enumerate() {
                    let comma = if i + 1 < l.rows.len() { "," } else { "" };
                    writeln!(w, "    {}{comma}", indent(&l.row_json(r), "    "))?;
                }
                writeln!(w, "  ]")?;
            }
        }
        writeln!(w, "}}")
    }

    /// CSV: with a list, one header row and one row per item, each carrying the
    /// report's fields (the crystal, face, energies, tilt … it was computed for) as
    /// leading columns, so a saved file says what it is; without a list, the fields.
    fn write_csv(&self, w: &mut dyn Write) -> std::io::Result<()> {
        let quote = |s: String| {
            if s.contains([',', '"', '\n']) {
                format!("\"{}\"", s.replace('"', "\"\""))
            } else {
                s
            }
        };
        match &self.list {
            Some(l) => {
                let context: Vec<&(&str, &str, Value)> = self
                    .fields
                    .iter()
                    .filter(|f| !l.columns.iter().any(|c| c.key == f.0))
                    .collect();
                let head: Vec<&str> = context
                    .iter()
                    .map(|f| f.0)
                    .chain(l.columns.iter().map(|c| c.key))
                    .collect();
                writeln!(w, "{}", head.join(","))?;
                let lead: Vec<String> = context.iter().map(|f| quote(f.2.plain())).collect();
                for r in &l.rows {
                    let cells: Vec<String> = lead
                        .iter()
                        .cloned()
                        .chain(r.iter().map(|v| quote(v.plain())))
                        .collect();
                    writeln!(w, "{}", cells.join(","))?;
                }
                Ok(())
            }
            None => {
                let head: Vec<_> = self.fields.iter().map(|f| f.0.to_string()).collect();
                let vals: Vec<_> = self.fields.iter().map(|f| quote(f.2.plain())).collect();
                writeln!(w, "{}", head.join(","))?;
                writeln!(w, "{}", vals.join(","))
            }
        }
    }

    /// Aligned columns; widths come from a first pass over the rows, then each row is
    /// written as it is formatted.
    fn write_table(&self, w: &mut dyn Write) -> std::io::Result<()> {
        /// Lists longer than this, as one line, are printed one item to a line.
        const LONG_LIST_CHARS: usize = 100;
        let lw = self
            .fields
            .iter()
            .map(|f| f.1.chars().count())
            .max()
            .unwrap_or(0);
        for (_, label, v) in &self.fields {
            let pad = lw - label.chars().count();
            let shown = v.shown();
            match v {
                // A long list (reasons, say) reads better one item to a line.
                Value::List(items) if shown.chars().count() > LONG_LIST_CHARS => {
                    writeln!(w, "{label}:{:pad$} {} items:", "", items.len())?;
                    for item in items {
                        writeln!(w, "  - {}", item.shown())?;
                    }
                }
                _ => writeln!(w, "{label}:{:pad$} {shown}", "")?,
            }
        }
        if let Some(l) = &self.list {
            if !self.fields.is_empty() {
                writeln!(w)?;
            }
            let mut widths: Vec<usize> =
                l.columns.iter().map(|c| c.header.chars().count()).collect();
            for r in &l.rows {
                for (wd, v) in widths.iter_mut().zip(r) {
                    *wd = (*wd).max(v.shown().chars().count());
                }
            }
            let text_col: Vec<bool> = (0..l.columns.len())
                .map(|i| {
                    l.rows
                        .first()
                        .and_then(|r| r.get(i))
                        .is_some_and(Value::is_text)
                })
                .collect();
            let line = |w: &mut dyn Write, items: &[String]| -> std::io::Result<()> {
                let mut parts = Vec::new();
                for (i, s) in items.iter().enumerate() {
                    let pad = widths
                        .get(i)
                        .copied()
                        .unwrap_or(0)
                        .saturating_sub(s.chars().count());
                    if text_col.get(i).copied().unwrap_or(false) {
                        parts.push(format!("{s}{:pad$}", ""));
                    } else {
                        parts.push(format!("{:pad$}{s}", ""));
                    }
                }
                writeln!(w, "{}", parts.join("  ").trim_end())
            };
            let head: Vec<String> = l.columns.iter().map(|c| c.header.to_string()).collect();
            line(w, &head)?;
            for r in &l.rows {
                let cells: Vec<String> = r.iter().map(Value::shown).collect();
                line(w, &cells)?;
            }
            if l.rows.is_empty() {
                writeln!(w, "(none)")?;
            }
        }
        for n in &self.notes {
            writeln!(w, "{n}")?;
        }
        Ok(())
    }
}

impl List {
    /// One row as a JSON object keyed by the columns.
    fn row_json(&self, r: &[Value]) -> serde_json::Value {
        let mut o = serde_json::Map::new();
        for (c, v) in self.columns.iter().zip(r) {
            o.insert(c.key.to_string(), v.json());
        }
        serde_json::Value::Object(o)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The streamed JSON is the same document serde_json prints whole.
    #[test]
    fn streamed_json_equals_the_whole_document() {
        let mut r = Report::default();
        r.field("crystal", "crystal", Value::Text("cu".into()))
            .field("truncated", "cut", Value::Bool(false))
            .field(
                "zones",
                "zones",
                Value::List(vec![Value::List(vec![
                    Value::F32(-12.0, 1),
                    Value::F32(12.0, 1),
                ])]),
            );
        r.list = Some(List {
            key: "rows",
            columns: vec![col("a", "a"), col("b", "b")],
            rows: vec![
                vec![Value::Int(1), Value::Text("x,\"y\"".into())],
                vec![Value::Missing, Value::F32(0.1, 3)],
            ],
        });
        let v: serde_json::Value = serde_json::from_str(&r.render(Format::Json)).unwrap();
        assert_eq!(v, r.to_json());
        assert_eq!(r.render(Format::Json), json_text(&r.to_json()));
        let empty = Report {
            list: Some(List {
                key: "rows",
                columns: vec![col("a", "a")],
                rows: vec![],
            }),
            ..Report::default()
        };
        assert_eq!(empty.render(Format::Json), json_text(&empty.to_json()));
        // CSV rows carry the fields as leading columns.
        let csv = r.render(Format::Csv);
        let mut lines = csv.lines();
        assert_eq!(lines.next(), Some("crystal,truncated,zones,a,b"));
        assert_eq!(
            lines.next(),
            Some("cu,false,\"[-12, 12]\",1,\"x,\"\"y\"\"\"")
        );
    }

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
