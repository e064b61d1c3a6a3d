use clap::Parser;
use std::process::ExitCode;

/// The process's allocator. A job allocates and frees band buffers of
/// several MiB again and again; with the system allocator these often went
/// back to the kernel and were faulted in afresh on every band (about
/// 370 000 page faults and a third of the wall time of a warm 48-megapixel
/// run, measured: docs/PERFORMANCE.md). mimalloc keeps and reuses them.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// Transparent huge pages off for this process (Linux). mimalloc asks the
/// kernel for them, and then the first touch of fresh memory zeroes a whole
/// 2 MiB page at a time, however little of it the job uses: about a sixth
/// of the CPU time of a cold 48-megapixel run went to zeroing pages, and
/// with them off a cold run takes 0.17 s less (docs/PERFORMANCE.md).
#[cfg(target_os = "linux")]
fn without_transparent_huge_pages() {
    // SAFETY: prctl(PR_SET_THP_DISABLE) takes integers only and touches no
    // memory of this process; if it fails, the job only runs slower.
    unsafe {
        libc::prctl(libc::PR_SET_THP_DISABLE, 1, 0, 0, 0);
    }
}

#[cfg(not(target_os = "linux"))]
fn without_transparent_huge_pages() {}

fn main() -> ExitCode {
    without_transparent_huge_pages();
    // A panic is a bug: say so in one line and exit 3 (the default hook's
    // backtrace text is not for operators).
    std::panic::set_hook(Box::new(|info| {
        // The image readers catch a decoder's panic and return it as an internal error naming the file.
        if platesmith::raster::decoder_panic_is_caught() {
            return;
        }
        let place = info
            .location()
            .map(|l| format!(" at {}:{}", l.file(), l.line()))
            .unwrap_or_default();
        eprintln!("platesmith: internal error{place}: please report this with the input that caused it");
    }));
    let cli = platesmith::cli::Cli::parse();
    let code = match std::panic::catch_unwind(|| {
        // Test builds can force a panic to check this path (exit 3, one line).
        if cfg!(debug_assertions) && std::env::var_os("PLATESMITH_FORCE_PANIC").is_some() {
            panic!("forced by PLATESMITH_FORCE_PANIC");
        }
        platesmith::cli::run(cli)
    }) {
        Ok(Ok(code)) => code,
        Ok(Err(platesmith::Error::BrokenPipe)) => 0,
        Ok(Err(err)) => {
            eprintln!("platesmith: {err}");
            err.exit_code()
        }
        Err(_) => 3,
    };
    ExitCode::from(code as u8)
}
