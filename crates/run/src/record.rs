//! Result files of a run: field snapshots (`.vtu` + `fields.pvd`), `history.csv` flushed every
//! step, `run.log`, the wall-clock file `timing.csv`, the scenario copy and `summary.json`.
//!
//! Every file but `timing.csv` is a deterministic function of the scenario: wall-clock times
//! live only there, so two runs of one scenario (any thread count, resumed or not) give
//! identical bytes everywhere else.

use std::fs::File;
use std::io::{BufWriter, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use dilata_fem::dofs::DofMap;
use dilata_fem::shape::eval_into;
use dilata_fem::values::space_kind;
use dilata_fem::FieldHandle;
use dilata_io::{write_vtu, FieldData, FieldKind, IoError, PvdWriter};
use dilata_material::elastic::{hydrostatic, max_principal, von_mises, Voigt};
use dilata_mesh::Mesh;
use dilata_physics::coupled_post::FiniteNodal;

/// Columns of `history.csv`, in order (documented in docs/scenario.md).
pub const HISTORY_COLUMNS: [&str; 23] = [
    "time_s",
    "step",
    "stage",
    "dt_s",
    "newton_iterations",
    "factorizations",
    "rejected_attempts",
    "amount_mol",
    "inflow_mol",
    "balance_error_mol",
    "c_mean_mol_m3",
    "c_min_mol_m3",
    "c_max_mol_m3",
    "peak_hydrostatic_stress_pa",
    "peak_max_principal_stress_pa",
    "peak_von_mises_stress_pa",
    "elastic_energy_j",
    "chemical_energy_j",
    "gradient_energy_j",
    "free_energy_j",
    "fraction_above_mean",
    "interface_measure",
    "volume_m3",
];

/// One row of the history.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct HistoryRow {
    pub time: f64,
    pub step: usize,
    pub stage: String,
    pub dt: f64,
    pub newton_iterations: usize,
    pub factorizations: usize,
    pub rejected: usize,
    pub amount: f64,
    pub inflow: f64,
    pub balance_error: f64,
    pub c_mean: f64,
    pub c_min: f64,
    pub c_max: f64,
    pub peak_hydrostatic: f64,
    pub peak_principal: f64,
    pub peak_von_mises: f64,
    pub elastic_energy: f64,
    pub chemical_energy: f64,
    /// `∫ ½ grad c · κ grad c dV` in J.
    pub gradient_energy: f64,
    /// Total free energy: elastic + chemical + gradient, in J.
    pub free_energy: f64,
    /// Volume fraction where c exceeds its mean.
    pub fraction_above_mean: f64,
    /// `∫ |grad c| dV / (c_max − c_min)`: the interface area (3D, axisymmetric) or length per
    /// unit thickness (plane models) once the phases have separated; 0 for a uniform field.
    pub interface_measure: f64,
    /// Volume of the deformed body `∫ det F dV₀` in m³ (per unit thickness in plane strain and
    /// plane stress, over the revolution in axisymmetry); the undeformed volume in small strain.
    pub volume: f64,
}

fn io_err(path: &Path, operation: &'static str) -> impl FnOnce(std::io::Error) -> IoError {
    let path = path.to_path_buf();
    move |source| IoError::Io {
        path,
        operation,
        source,
    }
}

/// A text file written line by line and flushed after every line, which knows its length so
/// that a checkpoint can record it and a resumed run can cut the file back to it.
struct LineFile {
    path: PathBuf,
    file: BufWriter<File>,
    len: u64,
}

impl LineFile {
    /// Create (truncate) the file.
    fn create(path: &Path) -> Result<LineFile, IoError> {
        let file = File::create(path).map_err(io_err(path, "create"))?;
        Ok(LineFile {
            path: path.to_path_buf(),
            file: BufWriter::new(file),
            len: 0,
        })
    }

    /// Open an existing file, cut it to `len` bytes and append after them. Fails when the file
    /// is shorter than `len` (it was changed since the length was recorded).
    fn reopen(path: &Path, len: u64) -> Result<LineFile, IoError> {
        let file = std::fs::OpenOptions::new()
            .write(true)
            .open(path)
            .map_err(io_err(path, "open for resuming"))?;
        let actual = file
            .metadata()
            .map_err(io_err(path, "open for resuming"))?
            .len();
        if actual < len {
            return Err(IoError::Io {
                path: path.to_path_buf(),
                operation: "open for resuming",
                source: std::io::Error::other(format!(
                    "the file has {actual} bytes but the checkpoint recorded {len}; it was \
                     changed after the checkpoint"
                )),
            });
        }
        file.set_len(len).map_err(io_err(path, "truncate"))?;
        let mut file = BufWriter::new(file);
        file.seek(SeekFrom::Start(len))
            .map_err(io_err(path, "seek"))?;
        Ok(LineFile {
            path: path.to_path_buf(),
            file,
            len,
        })
    }

    /// Append one line (a newline is added) and flush it to the operating system.
    fn line(&mut self, text: &str) -> Result<(), IoError> {
        writeln!(self.file, "{text}")
            .and_then(|_| self.file.flush())
            .map_err(io_err(&self.path, "write"))?;
        self.len += text.len() as u64 + 1;
        Ok(())
    }
}

/// `history.csv`, one line per accepted step, flushed as it is written.
pub struct History(LineFile);

impl History {
    /// Create (truncate) the file and write the header.
    pub fn create(path: &Path) -> Result<History, IoError> {
        let mut h = History(LineFile::create(path)?);
        h.0.line(&HISTORY_COLUMNS.join(","))?;
        Ok(h)
    }

    /// Continue the file after its first `len` bytes (see [`History::n_bytes`]).
    pub fn reopen(path: &Path, len: u64) -> Result<History, IoError> {
        LineFile::reopen(path, len).map(History)
    }

    /// Bytes written so far.
    pub fn n_bytes(&self) -> u64 {
        self.0.len
    }

    /// Append a row and flush it to the operating system. Floating-point values are written
    /// with 17 significant digits (they read back to the same bits) except the mass-balance
    /// error, a diagnostic, with 7.
    pub fn append(&mut self, r: &HistoryRow) -> Result<(), IoError> {
        let line = format!(
            "{:.17e},{},{},{:.17e},{},{},{},{:.17e},{:.17e},{:.6e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e},{:.17e}",
            r.time,
            r.step,
            r.stage,
            r.dt,
            r.newton_iterations,
            r.factorizations,
            r.rejected,
            r.amount,
            r.inflow,
            r.balance_error,
            r.c_mean,
            r.c_min,
            r.c_max,
            r.peak_hydrostatic,
            r.peak_principal,
            r.peak_von_mises,
            r.elastic_energy,
            r.chemical_energy,
            r.gradient_energy,
            r.free_energy,
            r.fraction_above_mean,
            r.interface_measure,
            r.volume,
        );
        self.0.line(&line)
    }
}

/// `run.log`: one line per noteworthy event (rejected step attempts and their causes, a run
/// stopping early), flushed as written.
pub struct RunLog(LineFile);

impl RunLog {
    /// Create (truncate) the log.
    pub fn create(path: &Path) -> Result<RunLog, IoError> {
        LineFile::create(path).map(RunLog)
    }

    /// Continue the log after its first `len` bytes.
    pub fn reopen(path: &Path, len: u64) -> Result<RunLog, IoError> {
        LineFile::reopen(path, len).map(RunLog)
    }

    /// Bytes written so far.
    pub fn n_bytes(&self) -> u64 {
        self.0.len
    }

    /// Append one line.
    pub fn note(&mut self, line: &str) -> Result<(), IoError> {
        self.0.line(line)
    }
}

/// Columns of `timing.csv`, the only result file with wall-clock times.
pub const TIMING_COLUMNS: [&str; 4] = ["step", "time_s", "wall_s", "session"];

/// `timing.csv`: per accepted step, the wall-clock seconds spent on the run so far (summed over
/// the sessions of a resumed run, counting only the steps that were kept) and the session
/// (0 for the first, +1 for every resume).
pub struct Timing(LineFile);

impl Timing {
    /// Create (truncate) the file and write the header.
    pub fn create(path: &Path) -> Result<Timing, IoError> {
        let mut t = Timing(LineFile::create(path)?);
        t.0.line(&TIMING_COLUMNS.join(","))?;
        Ok(t)
    }

    /// Continue the file after its first `len` bytes.
    pub fn reopen(path: &Path, len: u64) -> Result<Timing, IoError> {
        LineFile::reopen(path, len).map(Timing)
    }

    /// Bytes written so far.
    pub fn n_bytes(&self) -> u64 {
        self.0.len
    }

    /// Append one row.
    pub fn append(
        &mut self,
        step: usize,
        time: f64,
        wall: f64,
        session: usize,
    ) -> Result<(), IoError> {
        self.0
            .line(&format!("{step},{time:.17e},{wall:.3},{session}"))
    }
}

/// Values of a field at every mesh node (entity-major, `n_components` per node). Nodes without
/// a DOF of this field (mid-side nodes of a linear field on a quadratic mesh) get the value
/// interpolated by the field's own shape functions.
pub fn nodal_field(mesh: &Mesh, dofs: &DofMap, field: FieldHandle, x: &[f64]) -> Vec<f64> {
    let spec = dofs.spec(field);
    let nc = spec.n_components;
    let mut out = vec![f64::NAN; mesh.n_points() * nc];
    let mut done = vec![false; mesh.n_points()];
    let mut values = Vec::new();
    let mut grads = Vec::new();
    for (id, kind, nodes) in mesh.cells() {
        let sk = space_kind(kind, spec.order).expect("validated by the DOF map");
        let local = &dofs.cell_dofs(id)[dofs.local_range(field, kind)];
        let n_space = sk.n_nodes();
        values.resize(n_space, 0.0);
        grads.resize(n_space, [0.0; 3]);
        let reference = kind.reference_nodes();
        for (a, &node) in nodes.iter().enumerate() {
            if done[node] {
                continue;
            }
            if a < n_space {
                // Space nodes are the first nodes of the cell (corners for a linear space).
                for comp in 0..nc {
                    out[node * nc + comp] = x[local[a * nc + comp]];
                }
            } else {
                eval_into(sk, reference[a], &mut values, &mut grads);
                for comp in 0..nc {
                    out[node * nc + comp] = (0..n_space)
                        .map(|b| values[b] * x[local[b * nc + comp]])
                        .sum();
                }
            }
            done[node] = true;
        }
    }
    out
}

/// Write one snapshot.
pub struct Snapshot<'a> {
    pub u: Vec<f64>,
    pub c: Vec<f64>,
    pub mu: Vec<f64>,
    pub stress: &'a [Voigt],
    pub flux: &'a [[f64; 3]],
    /// Finite-strain arrays (`None` in small strain).
    pub finite: Option<&'a FiniteNodal>,
    /// Material index of each cell.
    pub material: &'a [u32],
}

/// One value of a written array, for an independent reader to check:
/// name, components per entity, flat index, value.
pub type Probe = (String, usize, usize, f64);

/// Write `snap` to `dir/fields_NNNN.vtu` and register it in `pvd` at time `t`. Returns one
/// probe per point array (the value at the middle node) and the file name.
pub fn write_snapshot(
    dir: &Path,
    index: usize,
    t: f64,
    mesh: &Mesh,
    snap: Snapshot<'_>,
    pvd: &mut PvdWriter,
) -> Result<(String, Vec<Probe>), IoError> {
    let name = format!("fields_{index:04}.vtu");
    let stress: Vec<f64> = snap.stress.iter().flat_map(|s| s.iter().copied()).collect();
    let scalar = |f: fn(&Voigt) -> f64| snap.stress.iter().map(f).collect::<Vec<f64>>();
    let flux: Vec<f64> = snap
        .flux
        .iter()
        .flat_map(|f| f[..mesh.dim].iter().copied())
        .collect();
    // A body without mechanics (no displacement components) has no u and no stress arrays.
    let mechanics = !snap.u.is_empty();
    let mut points = Vec::new();
    if mechanics {
        points.push(FieldData::new("u", FieldKind::Vector, snap.u));
    }
    points.push(FieldData::new("c", FieldKind::Scalar, snap.c));
    points.push(FieldData::new("mu", FieldKind::Scalar, snap.mu));
    if mechanics {
        points.extend([
            FieldData::new("stress", FieldKind::SymTensor, stress),
            FieldData::new("hydrostatic_stress", FieldKind::Scalar, scalar(hydrostatic)),
            FieldData::new("von_mises_stress", FieldKind::Scalar, scalar(von_mises)),
            FieldData::new(
                "max_principal_stress",
                FieldKind::Scalar,
                scalar(max_principal),
            ),
        ]);
    }
    if let Some(fin) = snap.finite {
        points.extend([
            FieldData::new(
                "nominal_stress",
                FieldKind::Tensor,
                fin.nominal_stress.iter().flatten().copied().collect(),
            ),
            FieldData::new(
                "deformation_gradient",
                FieldKind::Tensor,
                fin.deformation_gradient.iter().flatten().copied().collect(),
            ),
            FieldData::new(
                "stretch",
                FieldKind::Vector,
                fin.stretches.iter().flatten().copied().collect(),
            ),
            FieldData::new(
                "swelling_ratio",
                FieldKind::Scalar,
                fin.swelling_ratio.clone(),
            ),
        ]);
    }
    points.push(FieldData::new("flux", FieldKind::Vector, flux));
    let cells = vec![FieldData::new(
        "material",
        FieldKind::Scalar,
        snap.material.iter().map(|&m| m as f64).collect(),
    )];
    write_vtu(&dir.join(&name), mesh, &points, &cells)?;
    pvd.add(t, &name);
    pvd.write()?;
    let middle = mesh.n_points() / 2;
    let probes = points
        .iter()
        .map(|f| {
            let nc = match f.kind {
                FieldKind::Scalar => 1,
                // Vectors are written padded to 3 components.
                FieldKind::Vector => 3,
                FieldKind::SymTensor => 6,
                FieldKind::Tensor => 9,
            };
            let stored = f.values.len() / mesh.n_points();
            (f.name.clone(), nc, middle * nc, f.values[middle * stored])
        })
        .collect();
    Ok((name, probes))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_reopened_file_is_cut_back_and_continued_and_a_short_one_refused() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("run.log");
        let mut log = RunLog::create(&path).unwrap();
        log.note("first").unwrap();
        let kept = log.n_bytes();
        log.note("second, written after the checkpoint").unwrap();
        drop(log);
        let mut log = RunLog::reopen(&path, kept).unwrap();
        log.note("third").unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "first\nthird\n");
        assert_eq!(log.n_bytes(), 12);
        drop(log);
        let err = RunLog::reopen(&path, 100).err().unwrap().to_string();
        assert!(
            err.contains("12 bytes but the checkpoint recorded 100"),
            "{err}"
        );
    }
}
