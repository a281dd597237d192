//! Checkpoints: the complete state of a run between two steps, written so that a resumed run
//! continues bit for bit as if it had never stopped.
//!
//! # File format (version 4)
//!
//! `checkpoint_SSSSSSSS.dck` in the results folder (`S`: the number of accepted steps), UTF-8
//! text, one `key value` pair per line in a fixed order (see [`Checkpoint`] for the meaning):
//!
//! * the first line is `dilata-checkpoint 4` (the version; version 3, which lacks the
//!   `last_error` line, is still read);
//! * a real number is the 16 hexadecimal digits of its IEEE 754 bits (`3ff0000000000000` is
//!   1.0), so it reads back to the same bits; an absent optional value is `-`;
//! * an integer is decimal;
//! * a string is the hexadecimal digits of its UTF-8 bytes (`-` for the empty string), so that
//!   names may hold spaces or line breaks;
//! * a list is its length on the key's line followed by one line per element, whose fields are
//!   separated by single spaces; a vector of reals is one line of space-separated values.
//!
//! The file is replaced atomically; the run keeps the newest two.

use std::path::{Path, PathBuf};

use dilata_solve::time::{AcceptedError, IntegratorState};

use crate::driver::StageOutcome;
use crate::record::{HistoryRow, Probe};
use crate::RunError;

const MAGIC: &str = "dilata-checkpoint 4";
/// The previous version: the same without `last_error` (read as "none").
const MAGIC_3: &str = "dilata-checkpoint 3";

/// The state of a run between two steps.
#[derive(Clone, Debug, PartialEq)]
pub struct Checkpoint {
    /// [`scenario_hash`] of the scenario text the run used.
    pub scenario_hash: u64,
    /// Absolute path of the scenario file the run was started from (empty for a built-in one).
    pub scenario_file: String,
    /// The scenario file as the user named it (for messages and `summary.json`).
    pub scenario_name: String,
    /// Number of unknowns (a resumed model must have the same).
    pub n_dofs: usize,
    /// Index of the stage in progress.
    pub stage: usize,
    /// Time at which that stage started.
    pub stage_start: f64,
    /// Last value of the stage's stop quantity (None: the stage has no stop rule).
    pub stop_value: Option<f64>,
    /// Integrator state: time, solution, earlier solutions with their times, proposed step,
    /// accepted and rejected counts.
    pub integrator: IntegratorState,
    /// What the linear solver carries from one factorisation to the next
    /// ([`dilata_linalg::LinearSolver::carried_state`]).
    pub solver_state: Vec<f64>,
    /// Integrated inflow after the last two steps (`I_{n−1}`, `I_n`).
    pub inflow: (f64, f64),
    /// Accepted steps so far.
    pub steps: usize,
    /// Amount of species at t = 0.
    pub amount0: f64,
    /// The last history row written.
    pub last_row: HistoryRow,
    /// Largest peak hydrostatic stress so far and when.
    pub max_hydrostatic: (f64, f64),
    /// Largest peak principal stress so far and when.
    pub max_principal: (f64, f64),
    /// Stages finished so far.
    pub outcomes: Vec<StageOutcome>,
    /// Snapshots written so far: time and file name (the `.pvd` entries).
    pub snapshots: Vec<(f64, String)>,
    /// The last snapshot and its probes.
    pub last_snapshot: Option<(String, Vec<Probe>)>,
    /// Bytes of `history.csv`, `run.log` and `timing.csv` written so far.
    pub history_bytes: u64,
    pub log_bytes: u64,
    pub timing_bytes: u64,
    /// Wall-clock seconds spent on the kept steps.
    pub wall_seconds: f64,
    /// Session number (0 for the first run, +1 for every resume).
    pub session: usize,
}

/// 64-bit FNV-1a hash of the scenario text (Fowler–Noll–Vo; offset basis and prime as
/// published by its authors, from memory). It detects a changed scenario; it is not a
/// protection against deliberate collisions.
pub fn scenario_hash(text: &str) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for &b in text.as_bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    h
}

/// File name of the checkpoint after `steps` accepted steps.
pub fn checkpoint_name(steps: usize) -> String {
    format!("checkpoint_{steps:08}.dck")
}

/// Step counts of the checkpoint files in `dir`, ascending.
pub fn list_checkpoints(dir: &Path) -> Result<Vec<usize>, RunError> {
    let entries = std::fs::read_dir(dir).map_err(|source| RunError::Read {
        path: dir.to_path_buf(),
        source,
    })?;
    let mut found = Vec::new();
    for entry in entries.flatten() {
        let name = entry.file_name();
        let name = name.to_string_lossy();
        if let Some(digits) = name
            .strip_prefix("checkpoint_")
            .and_then(|r| r.strip_suffix(".dck"))
        {
            if let Ok(n) = digits.parse::<usize>() {
                found.push(n);
            }
        }
    }
    found.sort_unstable();
    Ok(found)
}

/// Write `ckpt` atomically to `dir` and delete all but the newest `keep` checkpoints. Returns
/// the path written.
pub fn write_checkpoint(dir: &Path, ckpt: &Checkpoint, keep: usize) -> Result<PathBuf, RunError> {
    let path = dir.join(checkpoint_name(ckpt.steps));
    dilata_io::write_atomic(&path, render(ckpt).as_bytes())?;
    let all = list_checkpoints(dir)?;
    let n_old = all.len().saturating_sub(keep);
    for &steps in &all[..n_old] {
        let old = dir.join(checkpoint_name(steps));
        std::fs::remove_file(&old).map_err(|source| {
            RunError::Output(dilata_io::IoError::Io {
                path: old.clone(),
                operation: "remove an old checkpoint",
                source,
            })
        })?;
    }
    Ok(path)
}

/// The newest checkpoint in `dir` that reads without error (an older one is used when the
/// newest is damaged), with its path.
pub fn load_checkpoint(dir: &Path) -> Result<(PathBuf, Checkpoint), RunError> {
    let all = list_checkpoints(dir)?;
    let mut first_error = None;
    for &steps in all.iter().rev() {
        let path = dir.join(checkpoint_name(steps));
        match read_checkpoint(&path) {
            Ok(c) => return Ok((path, c)),
            Err(e) => {
                first_error.get_or_insert(e);
            }
        }
    }
    Err(first_error.unwrap_or_else(|| RunError::Checkpoint {
        path: dir.to_path_buf(),
        message: "no checkpoint_*.dck file in this folder; a run writes one when it is \
                  interrupted (Ctrl-C, SIGTERM), when it stalls, and at the intervals \
                  output.checkpoint_every (simulated time) and output.checkpoint_wall (wall \
                  time, default 600 s)"
            .into(),
    }))
}

/// Read one checkpoint file.
pub fn read_checkpoint(path: &Path) -> Result<Checkpoint, RunError> {
    let text = std::fs::read_to_string(path).map_err(|source| RunError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    parse(&text).map_err(|(line, message)| RunError::Checkpoint {
        path: path.to_path_buf(),
        message: format!("line {line}: {message}"),
    })
}

fn real(v: f64) -> String {
    format!("{:016x}", v.to_bits())
}

fn opt_real(v: Option<f64>) -> String {
    v.map_or("-".into(), real)
}

fn text(s: &str) -> String {
    if s.is_empty() {
        return "-".into();
    }
    s.bytes().map(|b| format!("{b:02x}")).collect()
}

fn reals(v: &[f64]) -> String {
    v.iter().map(|&x| real(x)).collect::<Vec<_>>().join(" ")
}

fn row_fields(r: &HistoryRow) -> String {
    let reals_of_row = [
        r.time,
        r.dt,
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
    ];
    format!(
        "{} {} {} {} {} {}",
        text(&r.stage),
        r.step,
        r.newton_iterations,
        r.factorizations,
        r.rejected,
        reals(&reals_of_row)
    )
}

/// The checkpoint as text (format in the module documentation).
fn render(c: &Checkpoint) -> String {
    let mut out = vec![MAGIC.to_string()];
    let mut put = |k: &str, v: String| out.push(format!("{k} {v}"));
    put("scenario_hash", format!("{:016x}", c.scenario_hash));
    put("scenario_file", text(&c.scenario_file));
    put("scenario_name", text(&c.scenario_name));
    put("n_dofs", c.n_dofs.to_string());
    put("stage", c.stage.to_string());
    put("stage_start", real(c.stage_start));
    put("stop_value", opt_real(c.stop_value));
    let s = &c.integrator;
    put("t", real(s.t));
    put("dt_next", real(s.dt_next));
    put("n_accepted", s.n_accepted.to_string());
    put("n_rejected", s.n_rejected.to_string());
    put(
        "last_error",
        match s.last_error {
            Some(e) => format!("{} {} {}", real(e.dt), real(e.error), e.order),
            None => "-".into(),
        },
    );
    put("x", reals(&s.x));
    put("past", s.past.len().to_string());
    for (t, x) in &s.past {
        out.push(format!("{} {}", real(*t), reals(x)));
    }
    let mut put = |k: &str, v: String| out.push(format!("{k} {v}"));
    put("solver_state", reals(&c.solver_state));
    put("inflow", reals(&[c.inflow.0, c.inflow.1]));
    put("steps", c.steps.to_string());
    put("amount0", real(c.amount0));
    put("last_row", row_fields(&c.last_row));
    put(
        "max_hydrostatic",
        reals(&[c.max_hydrostatic.0, c.max_hydrostatic.1]),
    );
    put(
        "max_principal",
        reals(&[c.max_principal.0, c.max_principal.1]),
    );
    put("outcomes", c.outcomes.len().to_string());
    for o in &c.outcomes {
        out.push(format!(
            "{} {} {} {}",
            text(&o.name),
            real(o.start),
            real(o.end),
            text(&o.reason)
        ));
    }
    out.push(format!("snapshots {}", c.snapshots.len()));
    for (t, name) in &c.snapshots {
        out.push(format!("{} {}", real(*t), text(name)));
    }
    match &c.last_snapshot {
        None => out.push("last_snapshot -".into()),
        Some((name, probes)) => {
            out.push(format!("last_snapshot {} {}", text(name), probes.len()));
            for (pname, nc, idx, v) in probes {
                out.push(format!("{} {nc} {idx} {}", text(pname), real(*v)));
            }
        }
    }
    let mut put = |k: &str, v: String| out.push(format!("{k} {v}"));
    put("history_bytes", c.history_bytes.to_string());
    put("log_bytes", c.log_bytes.to_string());
    put("timing_bytes", c.timing_bytes.to_string());
    put("wall_seconds", real(c.wall_seconds));
    put("session", c.session.to_string());
    out.push("end".into());
    let mut s = out.join("\n");
    s.push('\n');
    s
}

/// A failure while parsing: 1-based line and what was wrong.
type ParseError = (usize, String);

/// Line-by-line reader of the format.
struct Lines<'a> {
    lines: std::iter::Enumerate<std::str::Lines<'a>>,
    line: usize,
}

impl<'a> Lines<'a> {
    fn next_line(&mut self) -> Result<&'a str, ParseError> {
        let (i, l) = self.lines.next().ok_or((
            self.line + 1,
            "the file ends early (an interrupted copy?)".into(),
        ))?;
        self.line = i + 1;
        Ok(l)
    }

    fn err<T>(&self, message: impl Into<String>) -> Result<T, ParseError> {
        Err((self.line, message.into()))
    }

    /// The value after `key` on the next line.
    fn value(&mut self, key: &str) -> Result<&'a str, ParseError> {
        let l = self.next_line()?;
        match l.split_once(' ') {
            Some((k, v)) if k == key => Ok(v),
            _ if l == key => Ok(""),
            _ => self.err(format!("expected the key '{key}'")),
        }
    }

    fn fields(&mut self, n: usize) -> Result<Vec<&'a str>, ParseError> {
        let l = self.next_line()?;
        let f: Vec<&str> = l.split(' ').collect();
        if f.len() != n {
            return self.err(format!("expected {n} fields, found {}", f.len()));
        }
        Ok(f)
    }

    fn real(&self, s: &str) -> Result<f64, ParseError> {
        if s.len() != 16 {
            return self.err(format!("'{s}' is not a real (16 hexadecimal digits)"));
        }
        match u64::from_str_radix(s, 16) {
            Ok(bits) => Ok(f64::from_bits(bits)),
            Err(_) => self.err(format!("'{s}' is not a real (16 hexadecimal digits)")),
        }
    }

    fn opt_real(&self, s: &str) -> Result<Option<f64>, ParseError> {
        if s == "-" {
            return Ok(None);
        }
        self.real(s).map(Some)
    }

    fn int<T: std::str::FromStr>(&self, s: &str) -> Result<T, ParseError> {
        s.parse()
            .or_else(|_| self.err(format!("'{s}' is not a whole number")))
    }

    fn text(&self, s: &str) -> Result<String, ParseError> {
        if s == "-" {
            return Ok(String::new());
        }
        let bad = || (self.line, format!("'{s}' is not hexadecimal UTF-8 text"));
        if !s.len().is_multiple_of(2) {
            return Err(bad());
        }
        let bytes = (0..s.len())
            .step_by(2)
            .map(|i| u8::from_str_radix(&s[i..i + 2], 16).map_err(|_| bad()))
            .collect::<Result<Vec<u8>, _>>()?;
        String::from_utf8(bytes).map_err(|_| bad())
    }

    fn reals(&self, s: &str) -> Result<Vec<f64>, ParseError> {
        if s.is_empty() {
            return Ok(Vec::new());
        }
        s.split(' ').map(|v| self.real(v)).collect()
    }

    fn pair(&self, s: &str) -> Result<(f64, f64), ParseError> {
        match self.reals(s)?[..] {
            [a, b] => Ok((a, b)),
            _ => self.err("expected two reals"),
        }
    }
}

fn parse(input: &str) -> Result<Checkpoint, ParseError> {
    let mut r = Lines {
        lines: input.lines().enumerate(),
        line: 0,
    };
    let version = match r.next_line()? {
        MAGIC => 4,
        MAGIC_3 => 3,
        _ => {
            return r.err(format!(
                "not a checkpoint of this version (expected '{MAGIC}' or '{MAGIC_3}')"
            ))
        }
    };
    let v = r.value("scenario_hash")?;
    let scenario_hash = u64::from_str_radix(v, 16)
        .or_else(|_| r.err(format!("'{v}' is not a hexadecimal hash")))?;
    let v = r.value("scenario_file")?;
    let scenario_file = r.text(v)?;
    let v = r.value("scenario_name")?;
    let scenario_name = r.text(v)?;
    let v = r.value("n_dofs")?;
    let n_dofs = r.int(v)?;
    let v = r.value("stage")?;
    let stage = r.int(v)?;
    let v = r.value("stage_start")?;
    let stage_start = r.real(v)?;
    let v = r.value("stop_value")?;
    let stop_value = r.opt_real(v)?;
    let v = r.value("t")?;
    let t = r.real(v)?;
    let v = r.value("dt_next")?;
    let dt_next = r.real(v)?;
    let v = r.value("n_accepted")?;
    let n_accepted = r.int(v)?;
    let v = r.value("n_rejected")?;
    let n_rejected = r.int(v)?;
    let last_error = if version >= 4 {
        let v = r.value("last_error")?;
        if v == "-" {
            None
        } else {
            match v.split(' ').collect::<Vec<_>>()[..] {
                [dt, error, order] => Some(AcceptedError {
                    dt: r.real(dt)?,
                    error: r.real(error)?,
                    order: r.int(order)?,
                }),
                _ => return r.err("expected '-' or a step size, an error norm and an order"),
            }
        }
    } else {
        None
    };
    let v = r.value("x")?;
    let x = r.reals(v)?;
    if x.len() != n_dofs {
        return r.err(format!("x has {} values, n_dofs is {n_dofs}", x.len()));
    }
    let v = r.value("past")?;
    let n_past: usize = r.int(v)?;
    if n_past > 2 {
        return r.err(format!(
            "{n_past} earlier solutions; the integrator keeps at most 2"
        ));
    }
    let mut past = Vec::with_capacity(n_past);
    for _ in 0..n_past {
        let l = r.next_line()?;
        let (tp, xp) = l.split_once(' ').unwrap_or((l, ""));
        let tp = r.real(tp)?;
        let xp = r.reals(xp)?;
        if xp.len() != n_dofs {
            return r.err(format!("an earlier solution has {} values", xp.len()));
        }
        past.push((tp, xp));
    }
    let v = r.value("solver_state")?;
    let solver_state = r.reals(v)?;
    let v = r.value("inflow")?;
    let inflow = r.pair(v)?;
    let v = r.value("steps")?;
    let steps = r.int(v)?;
    let v = r.value("amount0")?;
    let amount0 = r.real(v)?;
    let v = r.value("last_row")?;
    let last_row = parse_row(&r, v)?;
    let v = r.value("max_hydrostatic")?;
    let max_hydrostatic = r.pair(v)?;
    let v = r.value("max_principal")?;
    let max_principal = r.pair(v)?;
    let v = r.value("outcomes")?;
    let n_outcomes: usize = r.int(v)?;
    let mut outcomes = Vec::new();
    for _ in 0..n_outcomes {
        let f = r.fields(4)?;
        outcomes.push(StageOutcome {
            name: r.text(f[0])?,
            start: r.real(f[1])?,
            end: r.real(f[2])?,
            reason: r.text(f[3])?,
        });
    }
    let v = r.value("snapshots")?;
    let n_snapshots: usize = r.int(v)?;
    let mut snapshots = Vec::new();
    for _ in 0..n_snapshots {
        let f = r.fields(2)?;
        snapshots.push((r.real(f[0])?, r.text(f[1])?));
    }
    let v = r.value("last_snapshot")?;
    let last_snapshot = if v == "-" {
        None
    } else {
        let (name, n) = v
            .split_once(' ')
            .ok_or((r.line, "expected a name and a count".to_string()))?;
        let name = r.text(name)?;
        let n: usize = r.int(n)?;
        let mut probes = Vec::new();
        for _ in 0..n {
            let f = r.fields(4)?;
            probes.push((r.text(f[0])?, r.int(f[1])?, r.int(f[2])?, r.real(f[3])?));
        }
        Some((name, probes))
    };
    let v = r.value("history_bytes")?;
    let history_bytes = r.int(v)?;
    let v = r.value("log_bytes")?;
    let log_bytes = r.int(v)?;
    let v = r.value("timing_bytes")?;
    let timing_bytes = r.int(v)?;
    let v = r.value("wall_seconds")?;
    let wall_seconds = r.real(v)?;
    let v = r.value("session")?;
    let session = r.int(v)?;
    if r.next_line()? != "end" {
        return r.err("expected 'end'");
    }
    Ok(Checkpoint {
        scenario_hash,
        scenario_file,
        scenario_name,
        n_dofs,
        stage,
        stage_start,
        stop_value,
        integrator: IntegratorState {
            t,
            x,
            past,
            dt_next,
            n_accepted,
            n_rejected,
            last_error,
        },
        solver_state,
        inflow,
        steps,
        amount0,
        last_row,
        max_hydrostatic,
        max_principal,
        outcomes,
        snapshots,
        last_snapshot,
        history_bytes,
        log_bytes,
        timing_bytes,
        wall_seconds,
        session,
    })
}

fn parse_row(r: &Lines<'_>, v: &str) -> Result<HistoryRow, ParseError> {
    let f: Vec<&str> = v.split(' ').collect();
    if f.len() != 23 {
        return r.err(format!("a history row has 23 fields, found {}", f.len()));
    }
    let x = f[5..]
        .iter()
        .map(|s| r.real(s))
        .collect::<Result<Vec<f64>, _>>()?;
    Ok(HistoryRow {
        stage: r.text(f[0])?,
        step: r.int(f[1])?,
        newton_iterations: r.int(f[2])?,
        factorizations: r.int(f[3])?,
        rejected: r.int(f[4])?,
        time: x[0],
        dt: x[1],
        amount: x[2],
        inflow: x[3],
        balance_error: x[4],
        c_mean: x[5],
        c_min: x[6],
        c_max: x[7],
        peak_hydrostatic: x[8],
        peak_principal: x[9],
        peak_von_mises: x[10],
        elastic_energy: x[11],
        chemical_energy: x[12],
        gradient_energy: x[13],
        free_energy: x[14],
        fraction_above_mean: x[15],
        interface_measure: x[16],
        volume: x[17],
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Checkpoint {
        Checkpoint {
            scenario_hash: scenario_hash("title = \"x\"\n"),
            scenario_file: "/tmp/a b/scenario.toml".into(),
            scenario_name: "b/scenario.toml".into(),
            n_dofs: 3,
            stage: 1,
            stage_start: 0.1 + 0.2,
            stop_value: Some(-0.0),
            integrator: IntegratorState {
                t: 1.0 / 3.0,
                x: vec![f64::MIN_POSITIVE, -1e300, 5e-324],
                past: vec![(0.25, vec![1.0, 2.0, 3.0]), (0.0, vec![0.0; 3])],
                dt_next: 1e-7,
                n_accepted: 12,
                n_rejected: 3,
                last_error: Some(AcceptedError {
                    dt: 0.1 + 0.2,
                    error: 0.7,
                    order: 2,
                }),
            },
            solver_state: vec![0.5; 6],
            inflow: (1e-20, -2e-20),
            steps: 12,
            amount0: 7.0,
            last_row: HistoryRow {
                time: 1.0 / 3.0,
                step: 12,
                stage: "rest\nand more".into(),
                dt: 0.01,
                balance_error: f64::NAN,
                ..HistoryRow::default()
            },
            max_hydrostatic: (1e9, 0.2),
            max_principal: (2e9, 0.3),
            outcomes: vec![StageOutcome {
                name: "charge".into(),
                start: 0.0,
                end: 0.3,
                reason: "mean concentration reached 1e4 (value 1.00001e4)".into(),
            }],
            snapshots: vec![(0.0, "fields_0000.vtu".into())],
            last_snapshot: Some(("fields_0000.vtu".into(), vec![("u".into(), 3, 9, 0.5)])),
            history_bytes: 1234,
            log_bytes: 0,
            timing_bytes: 99,
            wall_seconds: 1.5,
            session: 2,
        }
    }

    fn bits_equal(a: &Checkpoint, b: &Checkpoint) -> bool {
        // NaN != NaN: compare the rendered forms, which hold the exact bits.
        render(a) == render(b)
    }

    #[test]
    fn a_checkpoint_reads_back_to_the_same_bits() {
        let c = sample();
        let back = parse(&render(&c)).unwrap();
        assert!(bits_equal(&c, &back));
        assert_eq!(back.integrator.x[2].to_bits(), 1);
        assert_eq!(back.stop_value.unwrap().to_bits(), (-0.0f64).to_bits());
        assert_eq!(back.last_row.stage, "rest\nand more");
        assert!(back.last_row.balance_error.is_nan());
        assert_eq!(back.integrator.last_error, c.integrator.last_error);
        let none = Checkpoint {
            integrator: IntegratorState {
                last_error: None,
                ..c.integrator.clone()
            },
            ..c.clone()
        };
        assert!(bits_equal(&none, &parse(&render(&none)).unwrap()));
    }

    /// A version-3 checkpoint (no `last_error` line) still resumes, without the step
    /// control's memory.
    #[test]
    fn a_version_3_checkpoint_is_read_without_the_last_error() {
        let text = render(&sample());
        let v3: Vec<&str> = text
            .lines()
            .filter(|l| !l.starts_with("last_error "))
            .map(|l| if l == MAGIC { MAGIC_3 } else { l })
            .collect();
        let back = parse(&(v3.join("\n") + "\n")).unwrap();
        assert_eq!(back.integrator.last_error, None);
        assert_eq!(back.integrator.n_rejected, 3);
        let damaged = text.replace("last_error ", "last_error 1 ");
        let (line, message) = parse(&damaged).unwrap_err();
        assert_eq!(line, 13, "{message}");
        assert!(message.contains("expected '-' or a step size"), "{message}");
    }

    #[test]
    fn a_cut_or_damaged_checkpoint_is_refused_with_its_line() {
        let text = render(&sample());
        let cut = &text[..text.len() / 2];
        assert!(parse(cut).is_err());
        let damaged = text.replace("n_dofs 3", "n_dofs 4");
        let (line, message) = parse(&damaged).unwrap_err();
        assert_eq!(line, 14, "{message}");
        assert!(message.contains("x has 3 values"), "{message}");
        assert!(parse("something else\n").is_err());
    }

    #[test]
    fn only_the_newest_two_checkpoints_are_kept_and_the_newest_is_loaded() {
        let dir = tempfile::tempdir().unwrap();
        let mut c = sample();
        for steps in [3, 7, 12] {
            c.steps = steps;
            write_checkpoint(dir.path(), &c, 2).unwrap();
        }
        assert_eq!(list_checkpoints(dir.path()).unwrap(), vec![7, 12]);
        // A damaged newest file falls back to the older one.
        std::fs::write(
            dir.path().join(checkpoint_name(12)),
            "dilata-checkpoint 1\n",
        )
        .unwrap();
        let (path, back) = load_checkpoint(dir.path()).unwrap();
        assert!(path.ends_with(checkpoint_name(7)));
        assert_eq!(back.steps, 7);
    }

    #[test]
    fn the_scenario_hash_sees_a_one_byte_change() {
        assert_ne!(
            scenario_hash("duration = 1.0"),
            scenario_hash("duration = 2.0")
        );
        // FNV-1a of the empty string is the offset basis (from memory).
        assert_eq!(scenario_hash(""), 0xcbf2_9ce4_8422_2325);
    }
}
