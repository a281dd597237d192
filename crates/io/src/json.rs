//! Minimal JSON text building for machine-readable summaries (objects of numbers and strings):
//! the command line's `--json` output, expectation files and a run's `summary.json`.

/// A JSON value.
pub enum Json {
    Num(f64),
    Int(i64),
    Str(String),
    Arr(Vec<Json>),
    Obj(Vec<(String, Json)>),
}

impl Json {
    /// Compact JSON text. Floats use Rust's shortest round-trip form in exponent notation.
    pub fn render(&self) -> String {
        let mut s = String::new();
        self.render_into(&mut s);
        s
    }

    fn render_into(&self, s: &mut String) {
        match self {
            Json::Num(x) if x.is_finite() => s.push_str(&format!("{x:e}")),
            Json::Num(_) => s.push_str("null"),
            Json::Int(i) => s.push_str(&i.to_string()),
            Json::Str(t) => quote_into(t, s),
            Json::Arr(v) => {
                s.push('[');
                for (i, x) in v.iter().enumerate() {
                    if i > 0 {
                        s.push(',');
                    }
                    x.render_into(s);
                }
                s.push(']');
            }
            Json::Obj(kv) => {
                s.push('{');
                for (i, (k, v)) in kv.iter().enumerate() {
                    if i > 0 {
                        s.push(',');
                    }
                    quote_into(k, s);
                    s.push(':');
                    v.render_into(s);
                }
                s.push('}');
            }
        }
    }
}

fn quote_into(t: &str, s: &mut String) {
    s.push('"');
    for ch in t.chars() {
        match ch {
            '"' => s.push_str("\\\""),
            '\\' => s.push_str("\\\\"),
            c if (c as u32) < 0x20 => s.push_str(&format!("\\u{:04x}", c as u32)),
            c => s.push(c),
        }
    }
    s.push('"');
}
