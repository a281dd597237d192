//! `history.csv` read back: one numeric column per quantity, the stage names as text.

use std::path::{Path, PathBuf};

use crate::PlotError;

/// Name of the time column; the only column a history must have.
pub const TIME_COLUMN: &str = "time_s";
/// Name of the text column that holds the loading-program stage of each row.
pub const STAGE_COLUMN: &str = "stage";

/// The rows of a history file, column by column.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct HistoryTable {
    /// Simulated time of each row (s).
    pub time: Vec<f64>,
    /// Stage name of each row (empty strings when the file has no stage column).
    pub stage: Vec<String>,
    /// Every other column, by header name, in file order.
    columns: Vec<(String, Vec<f64>)>,
    /// True when the last line had no line end and could not be read (a run stopped while
    /// writing it); that line is left out.
    pub dropped_partial_line: bool,
}

impl HistoryTable {
    /// Read and parse `path`.
    pub fn read(path: &Path) -> Result<HistoryTable, PlotError> {
        let text = std::fs::read_to_string(path).map_err(|source| PlotError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        HistoryTable::parse(&text, path)
    }

    /// Parse the text of a history file; `path` only names the source in errors.
    pub fn parse(text: &str, path: &Path) -> Result<HistoryTable, PlotError> {
        let syntax = |line: usize, message: String| PlotError::Syntax {
            path: PathBuf::from(path),
            line,
            message,
        };
        let mut lines = text.split_inclusive('\n').enumerate();
        let header = match lines.next() {
            Some((_, h)) => h.trim_end_matches(['\n', '\r']),
            None => return Err(syntax(1, "empty file, expected a header line".into())),
        };
        let names: Vec<&str> = header.split(',').map(str::trim).collect();
        let time_at = names
            .iter()
            .position(|n| *n == TIME_COLUMN)
            .ok_or_else(|| {
                syntax(
                    1,
                    format!(
                        "no '{TIME_COLUMN}' column in the header (found: {})",
                        header
                    ),
                )
            })?;
        let stage_at = names.iter().position(|n| *n == STAGE_COLUMN);
        let mut table = HistoryTable {
            columns: names
                .iter()
                .enumerate()
                .filter(|(i, _)| *i != time_at && Some(*i) != stage_at)
                .map(|(_, n)| (n.to_string(), Vec::new()))
                .collect(),
            ..HistoryTable::default()
        };
        let mut values = Vec::with_capacity(names.len());
        for (index, raw) in lines {
            let number = index + 1;
            let complete = raw.ends_with('\n');
            let line = raw.trim_end_matches(['\n', '\r']);
            if line.trim().is_empty() {
                continue;
            }
            match parse_row(line, &names, time_at, stage_at, &mut values) {
                Ok(stage) => {
                    table.time.push(values[time_at]);
                    table.stage.push(stage);
                    let mut k = 0;
                    for (i, v) in values.iter().enumerate() {
                        if i != time_at && Some(i) != stage_at {
                            table.columns[k].1.push(*v);
                            k += 1;
                        }
                    }
                }
                Err(_) if !complete => table.dropped_partial_line = true,
                Err(message) => return Err(syntax(number, message)),
            }
        }
        if table.time.is_empty() {
            return Err(PlotError::NoRows {
                path: path.to_path_buf(),
            });
        }
        Ok(table)
    }

    /// Number of rows.
    pub fn n_rows(&self) -> usize {
        self.time.len()
    }

    /// A numeric column by header name (`None` when the file has no such column).
    pub fn column(&self, name: &str) -> Option<&[f64]> {
        self.columns
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, v)| v.as_slice())
    }

    /// Smallest and largest time of the rows.
    pub fn time_range(&self) -> (f64, f64) {
        let lo = self.time.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = self.time.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        (lo, hi)
    }

    /// Where the stage changes: the time of the last row of the earlier stage, and the name of
    /// the stage that follows.
    pub fn build_stage_boundaries(&self) -> Vec<(f64, String)> {
        (1..self.n_rows())
            .filter(|&i| self.stage[i] != self.stage[i - 1])
            .map(|i| (self.time[i - 1], self.stage[i].clone()))
            .collect()
    }
}

/// Split one data line into `values` (NaN in the stage slot); returns the stage name.
fn parse_row(
    line: &str,
    names: &[&str],
    time_at: usize,
    stage_at: Option<usize>,
    values: &mut Vec<f64>,
) -> Result<String, String> {
    let fields: Vec<&str> = line.split(',').map(str::trim).collect();
    if fields.len() != names.len() {
        return Err(format!(
            "expected {} comma-separated fields as in the header, found {}",
            names.len(),
            fields.len()
        ));
    }
    values.clear();
    let mut stage = String::new();
    for (i, f) in fields.iter().enumerate() {
        if Some(i) == stage_at {
            stage = f.to_string();
            values.push(f64::NAN);
            continue;
        }
        let v: f64 = f.parse().map_err(|_| {
            format!(
                "column '{}': expected a number, found '{}'",
                names[i],
                f.chars().take(40).collect::<String>()
            )
        })?;
        if i == time_at && !v.is_finite() {
            return Err(format!("column '{TIME_COLUMN}': time is not finite ({f})"));
        }
        values.push(v);
    }
    Ok(stage)
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "time_s,step,stage,dt_s\n1,1,a,1\n2,2,a,1\n4,3,b,2\n";

    #[test]
    fn columns_rows_and_stage_boundaries() {
        let t = HistoryTable::parse(TEXT, Path::new("h.csv")).unwrap();
        assert_eq!(t.n_rows(), 3);
        assert_eq!(t.time, [1.0, 2.0, 4.0]);
        assert_eq!(t.column("dt_s").unwrap(), [1.0, 1.0, 2.0]);
        assert!(t.column("stage").is_none());
        assert_eq!(t.time_range(), (1.0, 4.0));
        assert_eq!(t.build_stage_boundaries(), [(2.0, "b".to_string())]);
    }

    #[test]
    fn bad_lines_are_located() {
        let bad = TEXT.replace("4,3,b,2", "4,3,b,x");
        let e = HistoryTable::parse(&bad, Path::new("h.csv")).unwrap_err();
        let m = e.to_string();
        assert!(m.contains("h.csv:4") && m.contains("'dt_s'"), "{m}");
        let short = TEXT.replace("2,2,a,1", "2,2,a");
        let m = HistoryTable::parse(&short, Path::new("h.csv"))
            .unwrap_err()
            .to_string();
        assert!(m.contains("h.csv:3") && m.contains("expected 4"), "{m}");
        let m = HistoryTable::parse("step\n1\n", Path::new("h.csv"))
            .unwrap_err()
            .to_string();
        assert!(m.contains("no 'time_s' column"), "{m}");
        let m = HistoryTable::parse("time_s\n", Path::new("h.csv"))
            .unwrap_err()
            .to_string();
        assert!(m.contains("no rows"), "{m}");
    }

    #[test]
    fn an_unfinished_last_line_is_left_out() {
        let t = HistoryTable::parse(&format!("{TEXT}5,4,b"), Path::new("h.csv")).unwrap();
        assert_eq!(t.n_rows(), 3);
        assert!(t.dropped_partial_line);
    }
}
