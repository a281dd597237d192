//! Bounded fuzzing of the two readers of user files: the MSH mesh reader (ASCII and binary
//! samples in `meshes/`) and the scenario parser with the model builder (the examples'
//! scenarios). Mutated inputs may be accepted or refused, but must never panic, hang or
//! allocate without bound; refusals must be typed errors. Inputs that once failed live in
//! `tests/fuzz_corpus/` and are replayed here. Budget and seed: see `tests/fuzz/mod.rs`
//! (`DILATA_FUZZ_CASES`, `DILATA_FUZZ_SECONDS`, `DILATA_FUZZ_SEED`).

mod fuzz;

use std::path::Path;

use fuzz::{corpus_files, mutate_bytes, mutate_text, run_target, Budget, CappedAllocator, Rng};

#[global_allocator]
static ALLOCATOR: CappedAllocator = CappedAllocator;

const MESHES: [&str; 10] = [
    "hex20_v41_ascii.msh",
    "hex27_v41_binary.msh",
    "hex8_v22_ascii_repeats.msh",
    "quad8_v22_binary.msh",
    "quad9_v41_ascii.msh",
    "tet10_v22_binary.msh",
    "tet10_v41_ascii.msh",
    "tri3_v22_ascii.msh",
    "tri3_v41_ascii.msh",
    "tri3_v41_binary.msh",
];

const SCENARIOS: [&str; 4] = [
    "charging_particle",
    "bilayer_strip",
    "notched_plate",
    "periodic_layer",
];

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn mesh_samples() -> Vec<(Vec<u8>, bool)> {
    MESHES
        .iter()
        .map(|m| {
            let bytes = std::fs::read(root().join("meshes").join(m)).unwrap();
            (bytes, m.contains("binary"))
        })
        .collect()
}

fn scenario_samples() -> Vec<String> {
    SCENARIOS
        .iter()
        .map(|s| {
            std::fs::read_to_string(root().join("examples").join(s).join("scenario.toml")).unwrap()
        })
        .collect()
}

/// The MSH reader on any bytes: a mesh or a parse error, nothing else. True for a mesh.
fn msh_target(bytes: &[u8]) -> bool {
    dilata_mesh::msh::parse_msh(bytes, "fuzz.msh").is_ok()
}

/// The scenario parser, and for a file that parses, the model builder and the set-up check
/// (`dilata check`). Mesh files named by a mutated scenario are looked up in an empty place.
/// True for a scenario that passes the check.
fn scenario_target(bytes: &[u8]) -> bool {
    let Ok(text) = std::str::from_utf8(bytes) else {
        return false;
    };
    if dilata_io::scenario::Scenario::parse(text, "fuzz.toml").is_err() {
        return false;
    }
    let nowhere = Path::new("/nonexistent-dilata-fuzz");
    match dilata_run::build_model(text.to_string(), "fuzz.toml", nowhere) {
        Ok(model) => dilata_run::check_model(&model).is_ok(),
        Err(_) => false,
    }
}

#[test]
fn fuzz_the_msh_reader() {
    let samples = mesh_samples();
    let budget = Budget::from_env();
    let make = |rng: &mut Rng| {
        let (sample, binary) = rng.pick(&samples);
        let mut bytes = sample.clone();
        mutate_bytes(rng, &mut bytes, *binary);
        bytes
    };
    let n = run_target("msh", "msh", &budget, &make, msh_target);
    assert!(n > 0, "the budget allowed no case");
}

#[test]
fn fuzz_the_scenario_parser_and_model_builder() {
    let samples = scenario_samples();
    let budget = Budget::from_env();
    let make = |rng: &mut Rng| {
        let sample = rng.pick(&samples);
        mutate_text(rng, sample)
    };
    let n = run_target("scenario", "toml", &budget, &make, scenario_target);
    assert!(n > 0, "the budget allowed no case");
}

/// Every input that once crashed the MSH reader is now refused with a located error.
#[test]
fn the_msh_corpus_is_refused_with_located_errors() {
    for file in corpus_files("msh") {
        let bytes = std::fs::read(&file).unwrap();
        let err = dilata_mesh::msh::parse_msh(&bytes, "corpus.msh")
            .expect_err(&format!("{} parsed", file.display()));
        let message = err.to_string();
        assert!(
            message.starts_with("corpus.msh:"),
            "{}: {message}",
            file.display()
        );
    }
}

/// Every scenario that once crashed the parser or the model builder is now refused with a
/// located error.
#[test]
fn the_scenario_corpus_is_refused_with_located_errors() {
    for file in corpus_files("scenario") {
        let text = std::fs::read_to_string(&file).unwrap();
        let nowhere = Path::new("/nonexistent-dilata-fuzz");
        let err = match dilata_run::build_model(text, "corpus.toml", nowhere) {
            Ok(model) => dilata_run::check_model(&model)
                .expect_err(&format!("{} was accepted", file.display())),
            Err(e) => e,
        };
        let message = err.to_string();
        assert!(
            message.starts_with("corpus.toml:"),
            "{}: {message}",
            file.display()
        );
    }
}
