//! ParaView data collection (`.pvd`) for time series: an XML list of (time, file) pairs.
//!
//! Layout (VTK XML "Collection" file as read by vtkXMLCollectionReader):
//! ```text
//! <?xml version="1.0"?>
//! <VTKFile type="Collection" version="1.0" byte_order="LittleEndian">
//!   <Collection>
//!     <DataSet timestep="2.5e-1" group="" part="0" file="run_0001.vtu"/>
//!   </Collection>
//! </VTKFile>
//! ```

use std::path::{Path, PathBuf};

use crate::atomic::write_atomic;
use crate::error::IoError;

/// Format a time for every Dilata output file: Rust's `{:e}` formatting of `f64`.
///
/// Rust prints the *shortest* digit string that parses back to the same `f64` (round trip is
/// exact, bit for bit, including `-0.0`), in scientific notation with no padding, e.g. `0e0`,
/// `2.5e-1`, `1.0000000000000002e0`, `-3e-7`. C's `strtod`, Python's `float` and Rust's `parse`
/// all read this form. Non-finite values format as `NaN`/`inf`, which [`PvdWriter::write`]
/// refuses.
pub fn format_time(t: f64) -> String {
    format!("{t:e}")
}

/// Builds a `.pvd` collection; call [`PvdWriter::write`] after each [`PvdWriter::add`] so that the
/// collection on disk always lists every completed step (the file is replaced atomically).
#[derive(Clone, Debug, PartialEq)]
pub struct PvdWriter {
    path: PathBuf,
    entries: Vec<(f64, String)>,
}

impl PvdWriter {
    /// A collection to be written at `path`, with no entries yet.
    pub fn new(path: &Path) -> Self {
        PvdWriter {
            path: path.to_path_buf(),
            entries: Vec::new(),
        }
    }

    /// Append the data file `file` (relative to the `.pvd`'s directory) at time `time`.
    pub fn add(&mut self, time: f64, file: &str) {
        self.entries.push((time, file.to_string()));
    }

    /// Entries added so far, as (time, relative file name).
    pub fn entries(&self) -> &[(f64, String)] {
        &self.entries
    }

    /// Path of the `.pvd` file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The collection as XML text. Fails if a time is not finite.
    pub fn to_xml(&self) -> Result<String, IoError> {
        let mut s = String::from(
            "<?xml version=\"1.0\"?>\n<VTKFile type=\"Collection\" version=\"1.0\" byte_order=\"LittleEndian\">\n  <Collection>\n",
        );
        for (time, file) in &self.entries {
            if !time.is_finite() {
                return Err(IoError::NonFiniteTime {
                    path: self.path.clone(),
                    time: *time,
                    file: file.clone(),
                });
            }
            s.push_str(&format!(
                "    <DataSet timestep=\"{}\" group=\"\" part=\"0\" file=\"{}\"/>\n",
                format_time(*time),
                escape_attribute(file)
            ));
        }
        s.push_str("  </Collection>\n</VTKFile>\n");
        Ok(s)
    }

    /// Write (or replace) the `.pvd` file atomically.
    pub fn write(&self) -> Result<(), IoError> {
        let xml = self.to_xml()?;
        write_atomic(&self.path, xml.as_bytes())
    }
}

/// Escape text for a double-quoted XML attribute value (XML 1.0, section 2.3 AttValue and 2.4:
/// `<` and `&` must be escaped, `"` inside a `"`-quoted value; `>` escaped for symmetry).
fn escape_attribute(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn time_format_examples_round_trip() {
        for (t, s) in [
            (0.0, "0e0"),
            (0.25, "2.5e-1"),
            (-3e-7, "-3e-7"),
            (1.0, "1e0"),
        ] {
            assert_eq!(format_time(t), s);
            assert_eq!(s.parse::<f64>().unwrap().to_bits(), f64::to_bits(t));
        }
        assert_eq!(
            format_time(-0.0).parse::<f64>().unwrap().to_bits(),
            (-0.0f64).to_bits()
        );
    }

    #[test]
    fn attribute_escaping() {
        assert_eq!(
            escape_attribute(r#"a&b<"c">.vtu"#),
            "a&amp;b&lt;&quot;c&quot;&gt;.vtu"
        );
    }

    #[test]
    fn non_finite_time_is_an_error() {
        let mut w = PvdWriter::new(Path::new("x.pvd"));
        w.add(f64::NAN, "a.vtu");
        let e = w.to_xml().unwrap_err();
        assert!(e.to_string().contains("a.vtu"), "{e}");
    }
}
