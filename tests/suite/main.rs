//! The integration tests, gathered into one test binary so that the suite compiles and
//! links once instead of once per file (the CI budget is dominated by build time).
//! Each module is one area of the program; run one with `cargo test --test suite cli_proof::`.
//! Tests that change process-wide state (environment variables) live in binaries of their
//! own beside this folder (`tests/raster_fail_env.rs`).

mod jpeg;
#[path = "../support/rng.rs"]
mod rng;
#[path = "../support/scene.rs"]
mod scene;

mod bad_inputs;
mod cli_conditions;
mod cli_determinism;
mod cli_hotfolder;
mod cli_inspect;
mod cli_output_names;
mod cli_profile;
mod cli_proof;
mod cli_separate;
mod colour_difference;
mod colour_lcms2;
mod colour_reference;
mod colour_standards;
mod icc_profile;
mod inspect_bands;
mod job_streaming;
mod png_colour;
mod press_builtin;
mod press_characterization;
mod press_condition_file;
mod press_fit;
mod raster_bad;
mod raster_bands;
mod raster_inputs;
mod raster_output;
mod raster_read;
mod raster_write;
mod separation_engine;
mod separation_perceptual;
mod separation_properties;
mod separation_reseparation;
mod separation_table_direct;
mod settings_ranges;
mod table_cache;

/// Whether python3 with tifffile and imagecodecs, the independent TIFF reader, is
/// installed; a test that needs it says it is skipped when not.
pub fn tifffile_available() -> bool {
    let available = std::process::Command::new("python3")
        .args(["-c", "import tifffile, imagecodecs"])
        .status()
        .map(|s| s.success())
        .unwrap_or(false);
    if !available {
        println!("skipped: python3 with tifffile and imagecodecs is not installed (pip install tifffile imagecodecs)");
    }
    available
}
