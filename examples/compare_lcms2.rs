//! Table application against lcms2 and a plain memory copy, in one run on
//! one machine, on the same 50-megapixel 8-bit RGB picture (the photo-like
//! harbour of `benches/support/photo.rs`):
//!
//! (a) platesmith: `SeparationTable::apply_rgb8` of the default table
//!     (coated offset, sRGB, the default settings, perceptual, grid 33), on
//!     one thread and on every thread;
//! (b) lcms2: sRGB (lcms2's built-in profile) → the CMYK output profile given
//!     with `--profile` (the one `platesmith profile --out FILE` exports for
//!     the same settings), perceptual, RGB_8 → CMYK_8. Flag sets: the default
//!     (lcms2 optimises 8-bit RGB input to a precalculated 33-point table with
//!     8-bit prelinearisation and keeps a one-pixel cache) and `NO_CACHE`; the
//!     faster on one thread counts. The crate exposes no lcms2 threading
//!     plugin: the all-threads figure splits rows over rayon threads sharing
//!     one `NO_CACHE` transform (thread-safe in the crate's API);
//! (c) a memory copy of the picture's bytes (`copy_from_slice`): the
//!     bandwidth floor.
//!
//! Each figure is the best of `--repeat` runs (default 5). The ratios are of
//! throughput: (a)/(b) > 1 means platesmith is faster than lcms2, (a)/(c) is
//! the share of the copy's speed platesmith reaches. Output is `key=value`
//! lines that `scripts/compare-lcms2.sh` records into docs/PERFORMANCE.md.
//!
//!     cargo run --release --example compare_lcms2 -- --profile press.icc
//!     cargo run --release --example compare_lcms2 -- --write-tiff FILE
//!
//! Without `--profile` a stand-in profile is built with the library
//! (`platesmith::icc::build_output_profile`: colorimetric BToA tables from the
//! separator's inversion) and the output says so; the figure for the record
//! needs the exported profile. `--write-tiff FILE` only writes the picture as
//! an uncompressed TIFF (the input of the end-to-end timing in
//! `scripts/bench.sh`) and exits.

use lcms2::{Flags, Intent, PixelFormat, Profile, Transform};
use platesmith::colour::{Lab, RgbSpace, ciede2000};
use platesmith::icc::{IccVersion, OutputProfileSpec, build_output_profile, default_description};
use platesmith::ink::Cmyk;
use platesmith::press::builtin::coated_offset;
use platesmith::separation::{IntentLab, RelativeLab};
use platesmith::separation::{RgbGamut, SeparationSettings, SeparationTable, Separator};
use rayon::prelude::*;
use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Instant;

#[path = "../benches/support/photo.rs"]
mod photo;

struct Args {
    profile: Option<PathBuf>,
    write_tiff: Option<PathBuf>,
    repeat: usize,
}

fn parse_args() -> Result<Args, String> {
    let mut args = Args {
        profile: None,
        write_tiff: None,
        repeat: 5,
    };
    let mut it = std::env::args().skip(1);
    while let Some(a) = it.next() {
        let mut value = |name: &str| it.next().ok_or(format!("{name} needs a value"));
        match a.as_str() {
            "--profile" => args.profile = Some(value("--profile")?.into()),
            "--write-tiff" => args.write_tiff = Some(value("--write-tiff")?.into()),
            "--repeat" => {
                args.repeat = value("--repeat")?
                    .parse()
                    .map_err(|_| "--repeat needs a whole number".to_string())?;
                if args.repeat == 0 {
                    return Err("--repeat must be at least 1".into());
                }
            }
            other => {
                return Err(format!(
                    "unknown argument {other:?}; use --profile FILE, --write-tiff FILE, --repeat N"
                ));
            }
        }
    }
    Ok(args)
}

/// Best wall time of `repeat` runs, in seconds.
fn best_of(repeat: usize, mut run: impl FnMut()) -> f64 {
    (0..repeat)
        .map(|_| {
            let t = Instant::now();
            run();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

/// Time this thread has spent on a CPU, in seconds (Linux
/// `/proc/thread-self/schedstat`, first field, ns); `None` elsewhere. On a
/// machine shared with other work, on-CPU time of a one-thread run is the
/// steadier figure: time spent waiting for a core is left out.
fn thread_cpu_seconds() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    Some(s.split_whitespace().next()?.parse::<f64>().ok()? / 1e9)
}

/// CPU time of the whole process (every thread), in seconds (Linux
/// `/proc/self/stat`, user + system, in clock ticks of 1/100 s); `None` elsewhere.
fn process_cpu_seconds() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/self/stat").ok()?;
    let fields: Vec<&str> = s.rsplit_once(')')?.1.split_whitespace().collect();
    let ticks = fields.get(11)?.parse::<f64>().ok()? + fields.get(12)?.parse::<f64>().ok()?;
    Some(ticks / 100.0)
}

/// Best on-CPU time of `repeat` runs of `run` on the current thread.
fn best_cpu_of(repeat: usize, mut run: impl FnMut()) -> Option<f64> {
    let mut best = f64::INFINITY;
    for _ in 0..repeat {
        let t0 = thread_cpu_seconds()?;
        run();
        best = best.min(thread_cpu_seconds()? - t0);
    }
    Some(best)
}

/// A stand-in CMYK output profile from the separator: AToB the press model,
/// BToA (all three intents) the separator's colorimetric inversion, the gamut
/// tag the CIEDE2000 between a colour and the print of its inversion.
fn stand_in_profile(sep: &Separator) -> Result<Vec<u8>, String> {
    let a2b = |ink: Cmyk| sep.printed_relative(ink).lab();
    let b2a = |lab: Lab| Cmyk::from_array(sep.invert(RelativeLab::new(lab), None).x);
    let gamut = |lab: Lab| {
        ciede2000(
            lab,
            sep.printed_relative(Cmyk::from_array(sep.invert(RelativeLab::new(lab), None).x))
                .lab(),
        )
    };
    let spec = OutputProfileSpec {
        description: default_description("coated-offset"),
        copyright: "stand-in for the speed comparison".into(),
        version: IccVersion::V4,
        media_white: sep.condition().model.paper_xyz(),
        a2b: &a2b,
        a2b_perceptual: None,
        b2a: [&b2a, &b2a, &b2a],
        gamut: &gamut,
        a2b_grid: 17,
        b2a_grid: 33,
        float_b2d: None,
    };
    build_output_profile(&spec).map_err(|e| e.to_string())
}

fn main() -> ExitCode {
    match run() {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("compare_lcms2: {e}");
            ExitCode::from(2)
        }
    }
}

fn run() -> Result<(), String> {
    let args = parse_args()?;
    let t = Instant::now();
    let rgb = photo::harbour_rgb8();
    let pixels = photo::WIDTH * photo::HEIGHT;
    if let Some(path) = &args.write_tiff {
        photo::write_rgb8_tiff(path, &rgb, photo::WIDTH, photo::HEIGHT).map_err(|e| format!("{}: {e}", path.display()))?;
        println!("wrote={} width={} height={}", path.display(), photo::WIDTH, photo::HEIGHT);
        return Ok(());
    }
    eprintln!("picture made in {:.1} s", t.elapsed().as_secs_f64());

    let condition = coated_offset();
    let settings = SeparationSettings::for_condition(&condition);
    let sep = Separator::new(condition, settings).map_err(|e| e.to_string())?;
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    let t = Instant::now();
    let cpu0 = process_cpu_seconds();
    let mapping = sep.source_mapping(&gamut);
    let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
    let table_s = t.elapsed().as_secs_f64();
    let table_cpu_s = cpu0.zip(process_cpu_seconds()).map(|(a, b)| b - a);

    let (profile_bytes, profile_note) = match &args.profile {
        Some(p) => (
            std::fs::read(p).map_err(|e| format!("{}: {e}", p.display()))?,
            format!("{}", p.display()),
        ),
        None => (
            stand_in_profile(&sep)?,
            "stand-in built with platesmith::icc::build_output_profile (not the exported profile)".to_string(),
        ),
    };
    let srgb = Profile::new_srgb();
    let press = Profile::new_icc(&profile_bytes).map_err(|e| format!("lcms2 cannot open the profile: {e}"))?;

    let threads = rayon::current_num_threads();
    let one = rayon::ThreadPoolBuilder::new().num_threads(1).build().map_err(|e| e.to_string())?;
    let n = args.repeat;
    let row = photo::WIDTH;

    // (a) platesmith
    let mut ours = vec![0u8; pixels * 4];
    let a1 = best_of(n, || one.install(|| table.apply_rgb8(&rgb, &mut ours, row)));
    let an = best_of(n, || table.apply_rgb8(&rgb, &mut ours, row));

    // (b) lcms2
    let t = Instant::now();
    let cached: Transform<u8, u8> = Transform::new_flags(
        &srgb,
        PixelFormat::RGB_8,
        &press,
        PixelFormat::CMYK_8,
        Intent::Perceptual,
        Flags::default(),
    )
    .map_err(|e| format!("lcms2 transform: {e}"))?;
    let lcms_setup_default = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let shared: Transform<u8, u8, lcms2::GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
        lcms2::GlobalContext::new(),
        &srgb,
        PixelFormat::RGB_8,
        &press,
        PixelFormat::CMYK_8,
        Intent::Perceptual,
        Flags::NO_CACHE,
    )
    .map_err(|e| format!("lcms2 transform: {e}"))?;
    let lcms_setup_nocache = t.elapsed().as_secs_f64();
    let mut theirs = vec![0u8; pixels * 4];
    let b_default = best_of(n, || cached.transform_pixels(&rgb, &mut theirs));
    let b_nocache = best_of(n, || shared.transform_pixels(&rgb, &mut theirs));
    let bn = best_of(n, || {
        rgb.par_chunks(3 * row)
            .zip(theirs.par_chunks_mut(4 * row))
            .for_each(|(s, d)| shared.transform_pixels(s, d))
    });
    let (b1, b_flags) = if b_default <= b_nocache {
        (b_default, "default")
    } else {
        (b_nocache, "NO_CACHE")
    };
    // The same one-thread runs timed on the CPU (platesmith on the one-thread
    // pool's thread, lcms2 on this one).
    let a1_cpu = one.install(|| best_cpu_of(n, || table.apply_rgb8(&rgb, &mut ours, row)));
    let b1_cpu = if b_flags == "default" {
        best_cpu_of(n, || cached.transform_pixels(&rgb, &mut theirs))
    } else {
        best_cpu_of(n, || shared.transform_pixels(&rgb, &mut theirs))
    };

    // (c) memory copy of the same bytes
    let mut copy = vec![0u8; rgb.len()];
    let c1 = best_of(n, || copy.copy_from_slice(&rgb));
    std::hint::black_box(&copy);

    // Both outputs again from their one-thread runs, for the comparison below.
    table.apply_rgb8(&rgb, &mut ours, row);
    shared.transform_pixels(&rgb, &mut theirs);

    // How far the two separations of the same picture lie apart (percent ink).
    let diff: [f64; 4] = {
        let sums = ours
            .par_chunks(4 * 4096)
            .zip(theirs.par_chunks(4 * 4096))
            .map(|(a, b)| {
                let mut s = [0u64; 4];
                for (p, q) in a.chunks_exact(4).zip(b.chunks_exact(4)) {
                    for ch in 0..4 {
                        s[ch] += (p[ch] as i32 - q[ch] as i32).unsigned_abs() as u64;
                    }
                }
                s
            })
            .reduce(|| [0; 4], |a, b| std::array::from_fn(|i| a[i] + b[i]));
        sums.map(|s| s as f64 / pixels as f64 / 255.0 * 100.0)
    };

    let mp = pixels as f64 / 1e6;
    println!("pixels={pixels}");
    println!("threads={threads}");
    println!("profile={profile_note}");
    println!("table_build_s={table_s:.3}");
    if let Some(c) = table_cpu_s {
        println!("table_build_cpu_s={c:.2}");
    }
    println!("platesmith_1_thread_mpx_s={:.1}", mp / a1);
    println!("platesmith_{threads}_threads_mpx_s={:.1}", mp / an);
    println!("platesmith_scaling={:.2}", a1 / an);
    println!("lcms2_setup_default_s={lcms_setup_default:.3}");
    println!("lcms2_setup_no_cache_s={lcms_setup_nocache:.3}");
    println!("lcms2_default_1_thread_mpx_s={:.1}", mp / b_default);
    println!("lcms2_no_cache_1_thread_mpx_s={:.1}", mp / b_nocache);
    println!("lcms2_no_cache_{threads}_threads_rows_mpx_s={:.1}", mp / bn);
    println!("lcms2_fastest_1_thread_flags={b_flags}");
    println!("memcpy_gb_s={:.2}", rgb.len() as f64 / c1 / 1e9);
    println!("memcpy_mpx_s={:.1}", mp / c1);
    println!("ratio_a_over_b_1_thread={:.2}", b1 / a1);
    println!("ratio_a_over_b_{threads}_threads={:.2}", bn / an);
    println!("ratio_a_over_c_1_thread={:.3}", c1 / a1);
    match (a1_cpu, b1_cpu) {
        (Some(a), Some(b)) => {
            println!("platesmith_1_thread_cpu_mpx_s={:.1}", mp / a);
            println!("lcms2_fastest_1_thread_cpu_mpx_s={:.1}", mp / b);
            println!("ratio_a_over_b_1_thread_cpu={:.2}", b / a);
        }
        _ => println!("cpu_time=unavailable"),
    }
    println!(
        "mean_abs_difference_percent_cmyk={:.2},{:.2},{:.2},{:.2}",
        diff[0], diff[1], diff[2], diff[3]
    );
    Ok(())
}
