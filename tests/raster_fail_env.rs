//! The environment hook that forces staged writes to fail in debug builds, which tests
//! of the binary use to prove that a failed run leaves no partial file. In its own test
//! binary because it sets a process-wide variable.

use std::io::Write;

use platesmith::raster::{FAIL_AFTER_ENV, OutputSet};

#[test]
fn env_var_forces_a_write_failure_in_debug_builds() {
    let dir = tempfile::tempdir().unwrap();
    // SAFETY: this test binary has a single test, so no other thread reads the environment.
    unsafe { std::env::set_var(FAIL_AFTER_ENV, "10") };
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    let r = set.stage("out.bin", |w| w.write_all(&[0u8; 100]));
    unsafe { std::env::remove_var(FAIL_AFTER_ENV) };
    if cfg!(debug_assertions) {
        let err = r.expect_err("the hook should make the write fail");
        assert!(err.to_string().contains("disk full"), "{err}");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    } else {
        r.expect("release builds ignore the hook");
    }
}
