//! `platesmith profile` driven as a user would; the written profile is read
//! back through lcms2 (the outside reader) and its header checked against
//! ICC.1:2022 §7.2.

use assert_cmd::Command;
use lcms2::{ColorSpaceSignature, Locale, Profile, ProfileClassSignature};

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

#[test]
fn writes_a_v4_profile_and_a_v2_profile_on_request() {
    let dir = tempfile::tempdir().unwrap();
    let cases: [(&[&str], f64, &str, bool); 3] = [
        (&[], 4.4, "press.icc", true),
        (&["--no-float-tables"], 4.4, "press-16.icc", false),
        (&["--icc-version", "2"], 2.4, "press-v2.icc", false),
    ];
    for (flags, version, name, float_tables) in cases {
        let path = dir.path().join(name);
        let mut cmd = platesmith();
        cmd.args(["profile", "--out"])
            .arg(&path)
            .args(["--condition", "newsprint", "--tac", "230", "--gcr", "70"])
            .args(flags);
        let out = cmd
            .assert()
            .success()
            .stderr(predicates::str::contains("prediction"))
            .get_output()
            .stderr
            .clone();
        assert_eq!(String::from_utf8_lossy(&out).contains("floating-point"), float_tables);
        let bytes = std::fs::read(&path).unwrap();
        // ICC.1:2022 §7.2.2: the size field is the file's size; 'acsp' at byte 36.
        assert_eq!(u32::from_be_bytes(bytes[0..4].try_into().unwrap()) as usize, bytes.len());
        assert_eq!(&bytes[36..40], b"acsp");
        let p = Profile::new_icc(&bytes).expect("lcms2 reads it");
        assert_eq!(p.device_class(), ProfileClassSignature::OutputClass);
        assert_eq!(
            (p.color_space(), p.pcs()),
            (ColorSpaceSignature::CmykData, ColorSpaceSignature::LabData)
        );
        assert!((p.version() - version).abs() < 1e-9, "{}", p.version());
        // The floating-point BToD tables (multiProcessElementsType) unless left out.
        for tag in [
            lcms2::TagSignature::BToD0Tag,
            lcms2::TagSignature::BToD1Tag,
            lcms2::TagSignature::BToD2Tag,
        ] {
            assert_eq!(p.has_tag(tag), float_tables, "{name}: {tag:?}");
        }
        let d = p.info(lcms2::InfoType::Description, Locale::none()).unwrap();
        assert!(d.contains("newsprint") && d.contains("TAC 230 %") && d.contains("GCR 70 %"), "{d}");
        // lcms2 finds the ink limit in the BToA table (cmsDetectTAC): never
        // above it. Newsprint characterized from CGATS/SNAP TR 002 reaches its
        // darkest colour below the 230 % limit (measured 218 %), so the table's
        // heaviest build may stay under it.
        let tac = platesmith::press::icc_model::IccPressModel::from_bytes(&bytes, &path, Default::default())
            .unwrap()
            .detected_tac()
            .unwrap();
        assert!((200.0..=231.0).contains(&tac), "{tac}");
    }
}

#[test]
fn an_existing_file_is_kept_without_force_and_bad_options_write_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("p.icc");
    std::fs::write(&path, b"keep me").unwrap();
    platesmith()
        .args(["profile", "--out"])
        .arg(&path)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("p.icc"))
        .stderr(predicates::str::contains("--force"));
    assert_eq!(std::fs::read(&path).unwrap(), b"keep me");
    platesmith().args(["profile", "--force", "--out"]).arg(&path).assert().success();
    assert!(Profile::new_icc(&std::fs::read(&path).unwrap()).is_ok());

    let other = dir.path().join("q.icc");
    platesmith()
        .args(["profile", "--tac", "500", "--out"])
        .arg(&other)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("100–400"));
    platesmith()
        .args(["profile", "--icc-version", "3", "--out"])
        .arg(&other)
        .assert()
        .code(2);
    platesmith()
        .args(["profile", "--out"])
        .arg(dir.path().join("missing/q.icc"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("does not exist"));
    assert!(!other.exists());
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().map(|e| e.unwrap().file_name()).collect();
    assert_eq!(left.len(), 1, "{left:?}");
}
