//! ICC output profiles written by platesmith and read back as press models.
//!
//! References: lcms2 (through the `lcms2` crate) reads, transforms and
//! inspects every profile; the profile structure is checked against ICC.1:2022
//! §7.2 (header) and §8.5 (tags of an output profile); ΔE is CIEDE2000
//! (CIE 142-2001, implemented in `platesmith::colour`).
//!
//! The source model is the built-in `coated-offset` condition. The BToA tables
//! here come from a test-only inversion (nearest colour on a coarse CMYK grid
//! under an ink limit): the profile's AToB side and the machinery are under
//! test, not the quality of that inversion.

use lcms2::{
    CIExyY, ColorSpaceSignature, Flags, GlobalContext, Intent, Locale, PixelFormat, Profile, ProfileClassSignature, Tag, TagSignature,
    Transform,
};
use platesmith::colour::{D50, Lab, ciede2000, delta_e76};
use platesmith::icc::{IccVersion, OutputProfileSpec, build_output_profile, default_description, encode_lab, grid_lab};
use platesmith::ink::Cmyk;
use platesmith::press::icc_model::{DEFAULT_MODEL_GRID, IccColorimetry, IccModelOptions, IccPressModel, condition_from_icc};
use platesmith::press::{MediaWhite, PressModel, builtin::coated_offset};
use platesmith::separation::RelativeLab;
use rayon::prelude::*;
use std::collections::HashMap;
use std::path::Path;
use std::sync::Arc;

/// xorshift64 (Marsaglia 2003), deterministic test input.
struct Rng(u64);

impl Rng {
    fn unit(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }

    fn cmyk(&mut self) -> Cmyk {
        Cmyk::new(self.unit(), self.unit(), self.unit(), self.unit())
    }
}

/// Test-only inversion: the nearest (CIE76) colour among CMYK builds on an
/// 11-step grid whose total ink stays within `tac`.
struct NearestInversion {
    candidates: Vec<(Cmyk, Lab)>,
}

impl NearestInversion {
    fn new(model: &dyn PressModel, media: MediaWhite, tac: f64) -> NearestInversion {
        let mut candidates = Vec::new();
        for i in 0..11usize.pow(4) {
            let ink = Cmyk::from_array([i / 1331, i / 121 % 11, i / 11 % 11, i % 11].map(|v| v as f64 / 10.0));
            if ink.total() <= tac + 1e-9 {
                candidates.push((ink, media.relative_lab(model.xyz(ink))));
            }
        }
        NearestInversion { candidates }
    }

    fn nearest(&self, lab: Lab) -> (Cmyk, f64) {
        let mut best = (Cmyk::ZERO, f64::INFINITY);
        for &(ink, c) in &self.candidates {
            let d = (c.l - lab.l).powi(2) + (c.a - lab.a).powi(2) + (c.b - lab.b).powi(2);
            if d < best.1 {
                best = (ink, d);
            }
        }
        (best.0, best.1.sqrt())
    }
}

struct Fixture {
    model: Arc<dyn PressModel>,
    media: MediaWhite,
    inversion: NearestInversion,
}

fn fixture(tac: f64) -> Fixture {
    let model = coated_offset().model;
    let media = MediaWhite::new(model.paper_xyz());
    let inversion = NearestInversion::new(&*model, media, tac);
    Fixture { model, media, inversion }
}

fn profile_bytes(f: &Fixture, version: IccVersion, a2b_grid: u32, b2a_grid: u32) -> Vec<u8> {
    let a2b = |ink: Cmyk| f.media.relative_lab(f.model.xyz(ink));
    // The three BToA tables and the gamut table sample the same nodes: search each node once.
    let nodes: HashMap<[u64; 3], (Cmyk, f64)> = (0..b2a_grid.pow(3))
        .into_par_iter()
        .map(|i| {
            let lab = grid_lab(
                [i / (b2a_grid * b2a_grid), i / b2a_grid % b2a_grid, i % b2a_grid],
                b2a_grid,
                version,
            );
            (lab.to_array().map(f64::to_bits), f.inversion.nearest(lab))
        })
        .collect();
    let nearest = |lab: Lab| match nodes.get(&lab.to_array().map(f64::to_bits)) {
        Some(&found) => found,
        None => f.inversion.nearest(lab),
    };
    let b2a = |lab: Lab| nearest(lab).0;
    // Test-only gamut measure: CIE76 distance to the nearest grid build beyond
    // the 5 ΔE the coarse grid itself leaves between neighbours.
    let gamut = |lab: Lab| (nearest(lab).1 - 5.0).max(0.0);
    let spec = OutputProfileSpec {
        description: default_description("coated-offset"),
        copyright: "test profile".into(),
        version,
        media_white: f.model.paper_xyz(),
        a2b: &a2b,
        a2b_perceptual: None,
        b2a: [&b2a, &b2a, &b2a],
        gamut: &gamut,
        a2b_grid,
        b2a_grid,
        float_b2d: None,
    };
    build_output_profile(&spec).expect("profile builds")
}

fn lab_profile() -> Profile {
    let d = D50.xyz;
    let s = d.x + d.y + d.z;
    Profile::new_lab4_context(
        GlobalContext::new(),
        &CIExyY {
            x: d.x / s,
            y: d.y / s,
            Y: 1.0,
        },
    )
    .unwrap()
}

fn cmyk_to_lab(profile: &Profile, intent: Intent) -> Transform<[f64; 4], [f64; 3], GlobalContext, lcms2::DisallowCache> {
    Transform::new_flags_context(
        GlobalContext::new(),
        profile,
        PixelFormat::CMYK_DBL,
        &lab_profile(),
        PixelFormat::Lab_DBL,
        intent,
        Flags::NO_CACHE | Flags::NO_OPTIMIZE,
    )
    .unwrap()
}

fn lcms2_lab(t: &Transform<[f64; 4], [f64; 3], GlobalContext, lcms2::DisallowCache>, ink: Cmyk) -> Lab {
    let mut out = [[0.0; 3]];
    t.transform_pixels(&[ink.to_percent()], &mut out);
    Lab::from_array(out[0])
}

fn stats(values: &[f64]) -> (f64, f64) {
    (
        values.iter().sum::<f64>() / values.len() as f64,
        values.iter().cloned().fold(0.0, f64::max),
    )
}

const VERSIONS: [IccVersion; 2] = [IccVersion::V4, IccVersion::V2];

#[test]
fn written_profile_is_a_cmyk_output_profile_in_v4_and_v2() {
    let f = fixture(3.2);
    for version in VERSIONS {
        let bytes = profile_bytes(&f, version, 9, 9);
        // ICC.1:2022 §7.2: size in bytes 0–3, 'acsp' at 36, class 'prtr' at 12,
        // data colour space 'CMYK' at 16, PCS 'Lab ' at 20.
        assert_eq!(u32::from_be_bytes(bytes[0..4].try_into().unwrap()) as usize, bytes.len());
        assert_eq!(
            (&bytes[12..16], &bytes[16..20], &bytes[20..24]),
            (&b"prtr"[..], &b"CMYK"[..], &b"Lab "[..])
        );
        assert_eq!(&bytes[36..40], b"acsp");
        let p = Profile::new_icc(&bytes).expect("lcms2 reads the profile");
        assert_eq!(p.device_class(), ProfileClassSignature::OutputClass);
        assert_eq!(p.color_space(), ColorSpaceSignature::CmykData);
        assert_eq!(p.pcs(), ColorSpaceSignature::LabData);
        let want = version.number();
        assert!((p.version() - want).abs() < 1e-9, "{version:?}: version {}", p.version());
        use TagSignature::*;
        for tag in [
            AToB0Tag,
            AToB1Tag,
            AToB2Tag,
            BToA0Tag,
            BToA1Tag,
            BToA2Tag,
            GamutTag,
            MediaWhitePointTag,
            ProfileDescriptionTag,
            CopyrightTag,
        ] {
            assert!(p.has_tag(tag), "{version:?}: {tag:?} missing");
        }
        for intent in [Intent::Perceptual, Intent::RelativeColorimetric, Intent::Saturation] {
            assert!(p.is_clut(intent, 0) && p.is_clut(intent, 1), "{version:?}: {intent:?} tables");
        }
        let description = p.info(lcms2::InfoType::Description, Locale::none()).unwrap();
        assert_eq!(description, "platesmith output profile for coated-offset");
    }
}

#[test]
fn lcms2_reads_the_atob_table_as_the_model_wrote_it() {
    // Checks the PCS encoding of each version: lcms2 decodes the tables
    // (undoing the v2 legacy encoding itself) and must give the model's colour.
    let f = fixture(3.2);
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    for version in VERSIONS {
        let p = Profile::new_icc(&profile_bytes(&f, version, 17, 9)).unwrap();
        let relative = cmyk_to_lab(&p, Intent::RelativeColorimetric);
        let absolute = cmyk_to_lab(&p, Intent::AbsoluteColorimetric);
        // At the grid nodes only the 16-bit quantisation separates the two.
        let mut worst_node = 0.0f64;
        for i in 0..5usize.pow(4) {
            let ink = Cmyk::from_array([i / 125, i / 25 % 5, i / 5 % 5, i % 5].map(|v| v as f64 / 4.0));
            let want = f.media.relative_lab(f.model.xyz(ink));
            worst_node = worst_node.max(delta_e76(lcms2_lab(&relative, ink), want));
            let abs_want = f.model.lab(ink);
            worst_node = worst_node.max(delta_e76(lcms2_lab(&absolute, ink), abs_want));
        }
        assert!(worst_node < 0.02, "{version:?}: node ΔE76 {worst_node}");
        let des: Vec<f64> = (0..5000)
            .map(|_| {
                let ink = rng.cmyk();
                ciede2000(lcms2_lab(&relative, ink), f.media.relative_lab(f.model.xyz(ink)))
            })
            .collect();
        let (mean, max) = stats(&des);
        println!("{version:?}: lcms2 through the 17^4 AToB1 vs model: ΔE2000 mean {mean:.3} max {max:.3}");
        assert!(mean <= 0.5, "{version:?}: mean {mean}");
    }
}

#[test]
fn icc_model_agrees_with_the_source_model() {
    let f = fixture(3.2);
    let mut rng = Rng(0x0123_4567_89ab_cdef);
    for version in VERSIONS {
        let bytes = profile_bytes(&f, version, 17, 9);
        let icc = IccPressModel::from_bytes(&bytes, Path::new("coated.icc"), IccModelOptions::default()).unwrap();
        let des: Vec<f64> = (0..20_000)
            .map(|_| {
                let ink = rng.cmyk();
                ciede2000(icc.lab(ink), f.model.lab(ink))
            })
            .collect();
        let (mean, max) = stats(&des);
        println!("{version:?}: IccPressModel (21^4 over a 17^4 profile) vs source model: ΔE2000 mean {mean:.3} max {max:.3}");
        assert!(mean <= 0.5, "{version:?}: mean {mean}");
        // The paper and the solids sit on grid nodes of both tables.
        for ink in [Cmyk::ZERO, Cmyk::new(1.0, 0.0, 0.0, 0.0), Cmyk::new(0.0, 0.0, 0.0, 1.0)] {
            assert!(ciede2000(icc.lab(ink), f.model.lab(ink)) < 0.05, "{version:?} {ink:?}");
        }
        // xyz() and lab() describe the same colour.
        let ink = Cmyk::new(0.3, 0.6, 0.1, 0.2);
        assert!(delta_e76(Lab::from_xyz(icc.xyz(ink)), icc.lab(ink)) < 1e-6);

        // Absolute colorimetry through lcms2 equals relative + media white
        // scaling when the profile has no chad tag (ICC.1:2022 Annex A).
        let options = IccModelOptions {
            colorimetry: IccColorimetry::Absolute,
            ..IccModelOptions::default()
        };
        let abs = IccPressModel::from_bytes(&bytes, Path::new("coated.icc"), options).unwrap();
        for _ in 0..200 {
            let ink = rng.cmyk();
            assert!(delta_e76(abs.lab(ink), icc.lab(ink)) < 0.01, "{version:?} {ink:?}");
        }
    }
}

#[test]
fn media_white_round_trips() {
    let f = fixture(3.2);
    let paper = f.model.paper_xyz();
    for version in VERSIONS {
        let bytes = profile_bytes(&f, version, 5, 5);
        let p = Profile::new_icc(&bytes).unwrap();
        let Tag::CIEXYZ(w) = p.read_tag(TagSignature::MediaWhitePointTag) else {
            panic!("no wtpt")
        };
        // XYZNumber is s15Fixed16 (ICC.1:2022 §4.14): half a step is 2^-17.
        let tolerance = 1.0 / 131072.0 + 1e-12;
        for (got, want) in [w.X, w.Y, w.Z].into_iter().zip(paper.to_array()) {
            assert!((got - want).abs() <= tolerance, "{version:?}: {got} vs {want}");
        }
        let icc = IccPressModel::from_bytes(&bytes, Path::new("w.icc"), IccModelOptions::default()).unwrap();
        assert!((icc.media_white().y - paper.y).abs() <= tolerance);
        assert!(delta_e76(Lab::from_xyz(icc.paper_xyz()), Lab::from_xyz(paper)) < 0.01);
    }
}

#[test]
fn gamut_and_btoa_tables_read_back() {
    let f = fixture(3.2);
    for version in VERSIONS {
        let grid = 9;
        let p = Profile::new_icc(&profile_bytes(&f, version, 5, grid)).unwrap();
        // Raw gamut table as stored (inputs in the PCS encoding of the version):
        // a paper-like colour is inside, a saturated blue far beyond any ink is outside.
        let Tag::Pipeline(gamut) = p.read_tag(TagSignature::GamutTag) else {
            panic!("no gamt")
        };
        let node = |lab: Lab| {
            let mut out = [0u16];
            gamut.eval(&encode_lab(lab, version), &mut out);
            out[0]
        };
        assert_eq!(node(Lab::new(80.0, 0.0, 0.0)), 0, "{version:?}");
        // A grid node far beyond the blue corner: the stored count is the callback's ΔE, rounded.
        let far = grid_lab([4, 4, 1], grid, version);
        let outside = node(far);
        let want = (f.inversion.nearest(far).1 - 5.0).max(0.0);
        assert!(
            outside > 20 && (outside as f64 - want).abs() <= 1.0,
            "{version:?}: {outside} vs {want:.1}"
        );

        // lcms2's Lab → CMYK at a grid node returns the inversion's build there.
        let t: Transform<[f64; 3], [f64; 4], GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
            GlobalContext::new(),
            &lab_profile(),
            PixelFormat::Lab_DBL,
            &p,
            PixelFormat::CMYK_DBL,
            Intent::RelativeColorimetric,
            Flags::NO_CACHE | Flags::NO_OPTIMIZE,
        )
        .unwrap();
        for index in [[6u32, 4, 4], [4, 3, 2], [2, 5, 3]] {
            let lab = grid_lab(index, grid, version);
            let mut out = [[0.0; 4]];
            t.transform_pixels(&[lab.to_array()], &mut out);
            let want = f.inversion.nearest(lab).0.to_percent();
            for (got, want) in out[0].iter().zip(want) {
                assert!((got - want).abs() < 1.0, "{version:?} {lab:?}: {:?} vs {want}", out[0]);
            }
        }
    }
}

#[test]
fn detected_tac_follows_the_ink_limit_of_the_btoa_table() {
    let f = fixture(3.0);
    let dir = tempfile::tempdir().unwrap();
    for version in VERSIONS {
        let bytes = profile_bytes(&f, version, 9, 17);
        let icc = IccPressModel::from_bytes(&bytes, Path::new("limited.icc"), IccModelOptions::default()).unwrap();
        let tac = icc.detected_tac().expect("lcms2 detects a TAC");
        println!("{version:?}: BToA limited to 300 %: lcms2 detects {tac:.1} %");
        assert!((290.0..=301.0).contains(&tac), "{version:?}: {tac}");

        let path = dir.path().join(format!("sheetfed-{version:?}.icc"));
        std::fs::write(&path, &bytes).unwrap();
        let condition = condition_from_icc(&path).unwrap();
        assert_eq!(condition.name, format!("sheetfed-{version:?}"));
        assert!((condition.tac * 100.0 - tac).abs() < 1e-9);
        assert_eq!(condition.description, "platesmith output profile for coated-offset");
    }
}

#[test]
fn bad_files_give_errors_naming_the_file() {
    let f = fixture(3.2);
    let dir = tempfile::tempdir().unwrap();
    let good = profile_bytes(&f, IccVersion::V4, 5, 5);
    let srgb = Profile::new_srgb().icc().unwrap();
    let cases: [(&str, Vec<u8>, &str); 4] = [
        (
            "garbage.icc",
            b"this is not a colour profile at all, just text that goes on for a while ".repeat(4),
            "not an ICC profile",
        ),
        ("display.icc", srgb, "display profile, not a CMYK output"),
        ("cut.icc", good[..good.len() / 2].to_vec(), "truncated"),
        ("empty.icc", Vec::new(), "not an ICC profile"),
    ];
    for (name, bytes, expected) in cases {
        let path = dir.path().join(name);
        std::fs::write(&path, &bytes).unwrap();
        let message = IccPressModel::from_file(&path).unwrap_err().to_string();
        assert!(message.contains(name) && message.contains(expected), "{name}: {message}");
        assert!(condition_from_icc(&path).is_err());
    }
    let missing = dir.path().join("missing.icc");
    let message = IccPressModel::from_file(&missing).unwrap_err().to_string();
    assert!(message.contains("missing.icc") && message.contains("cannot read"), "{message}");
}

#[test]
fn sampled_grid_error_against_lcms2() {
    // How far the model's simplex interpolation of its sampled grid strays
    // from lcms2 evaluating the same profile directly (lcms2 interpolates a
    // 4D table linearly along C and tetrahedrally in M, Y, K), for profiles
    // with 11 and 17 points per axis. Measured figures are in the module docs
    // of `platesmith::press::icc_model`.
    let f = fixture(3.2);
    let mut rng = Rng(0xdead_beef_cafe_f00d);
    let points: Vec<Cmyk> = (0..5000).map(|_| rng.cmyk()).collect();
    for profile_grid in [11, 17] {
        let bytes = profile_bytes(&f, IccVersion::V4, profile_grid, 5);
        let p = Profile::new_icc(&bytes).unwrap();
        let relative = cmyk_to_lab(&p, Intent::RelativeColorimetric);
        let direct: Vec<Lab> = points
            .iter()
            .map(|&ink| f.media.absolute_lab_from_relative(lcms2_lab(&relative, ink)))
            .collect();
        for grid in [17, DEFAULT_MODEL_GRID] {
            let options = IccModelOptions {
                grid,
                ..IccModelOptions::default()
            };
            let icc = IccPressModel::from_bytes(&bytes, Path::new("grid.icc"), options).unwrap();
            let des: Vec<f64> = points.iter().zip(&direct).map(|(&ink, &d)| ciede2000(icc.lab(ink), d)).collect();
            let (mean, max) = stats(&des);
            println!("profile {profile_grid}^4, model grid {grid}^4 vs lcms2 direct: ΔE2000 mean {mean:.3} max {max:.3}");
            if grid == DEFAULT_MODEL_GRID {
                assert!(mean <= 0.1 && max <= 0.5, "default grid: mean {mean} max {max}");
            }
        }
    }
}

// ---------------------------------------------------------------------------
// The separation's own profile (`platesmith::icc::profile_for`), checked
// through lcms2 as the outside reader.

mod separation_profile {
    use super::*;
    use platesmith::icc::{PERCEPTUAL_REFERENCE_BLACK, ProfileOptions, profile_for};
    use platesmith::separation::{Intent as SepIntent, SeparationSettings, SeparationTable, Separator};
    use platesmith::source::RgbSource;
    use std::sync::OnceLock;

    fn settings(intent: SepIntent) -> SeparationSettings {
        let mut s = SeparationSettings::for_condition(&coated_offset());
        s.intent = intent;
        s
    }

    /// The default profile of coated-offset in each version, built once.
    fn profile(version: IccVersion) -> &'static [u8] {
        static V4: OnceLock<Vec<u8>> = OnceLock::new();
        static V2: OnceLock<Vec<u8>> = OnceLock::new();
        let cell = match version {
            IccVersion::V4 => &V4,
            IccVersion::V2 => &V2,
        };
        cell.get_or_init(|| {
            let options = ProfileOptions {
                version,
                ..ProfileOptions::default()
            };
            profile_for(&coated_offset(), &settings(SepIntent::Perceptual), &options).expect("profile builds")
        })
    }

    fn lcms_intent(intent: SepIntent) -> Intent {
        match intent {
            SepIntent::Perceptual => Intent::Perceptual,
            SepIntent::Relative => Intent::RelativeColorimetric,
            SepIntent::Absolute => Intent::AbsoluteColorimetric,
        }
    }

    /// lcms2's own sRGB profile (IEC 61966-2-1) → the profile, evaluated
    /// without lcms2's precalculated device link.
    fn srgb_to_cmyk(p: &Profile, intent: Intent) -> Transform<[f64; 3], [f64; 4], GlobalContext, lcms2::DisallowCache> {
        Transform::new_flags_context(
            GlobalContext::new(),
            &Profile::new_srgb_context(GlobalContext::new()),
            PixelFormat::RGB_DBL,
            p,
            PixelFormat::CMYK_DBL,
            intent,
            Flags::NO_CACHE | Flags::NO_OPTIMIZE,
        )
        .unwrap()
    }

    #[test]
    fn loads_in_lcms2_as_a_cmyk_output_profile_in_v4_and_v2() {
        for version in VERSIONS {
            let p = Profile::new_icc(profile(version)).expect("lcms2 reads the profile");
            assert_eq!(p.device_class(), ProfileClassSignature::OutputClass);
            assert_eq!(p.color_space(), ColorSpaceSignature::CmykData);
            assert_eq!(p.pcs(), ColorSpaceSignature::LabData);
            assert!((p.version() - version.number()).abs() < 1e-9, "{version:?}: {}", p.version());
            for intent in [Intent::Perceptual, Intent::RelativeColorimetric, Intent::Saturation] {
                assert!(p.is_clut(intent, 0) && p.is_clut(intent, 1), "{version:?}: {intent:?}");
            }
            assert!(p.has_tag(TagSignature::GamutTag));
            let description = p.info(lcms2::InfoType::Description, Locale::none()).unwrap();
            assert!(
                description.contains("coated-offset") && description.contains("TAC 330 %"),
                "{description}"
            );
        }
    }

    /// platesmith's own separation of sRGB for an intent: the table `separate` builds.
    fn separation_table(intent: SepIntent) -> SeparationTable {
        let sep = Separator::new(coated_offset(), settings(intent)).unwrap();
        let source = RgbSource::Named(platesmith::colour::RgbSpace::Srgb);
        let gamut = source.gamut();
        let mapping = sep.source_mapping(gamut.as_ref());
        let conv = platesmith::colour::RgbSpace::Srgb.converter();
        SeparationTable::build(&sep, &mapping, &|rgb| platesmith::separation::IntentLab::new(conv.to_lab(rgb)))
    }

    /// Share within 1 % ink, 99th percentile, mean and worst (with where) of
    /// the largest per-channel difference (percent ink).
    struct Agreement {
        share: f64,
        p99: f64,
        mean: f64,
        worst: (f64, [f64; 3]),
    }

    fn agreement(rgb: &[[f64; 3]], theirs: &[[f64; 4]], table: &SeparationTable) -> Agreement {
        let mut worst = (0.0f64, [0.0; 3]);
        let mut diffs: Vec<f64> = rgb
            .iter()
            .zip(theirs)
            .map(|(v, lc)| {
                let ours = table.lookup(platesmith::colour::EncodedRgb(*v)).to_percent();
                let d = (0..4).map(|i| (ours[i] - lc[i]).abs()).fold(0.0, f64::max);
                if d > worst.0 {
                    worst = (d, *v);
                }
                d
            })
            .collect();
        let share = diffs.iter().filter(|&&d| d <= 1.0).count() as f64 / diffs.len() as f64;
        let (mean, _) = stats(&diffs);
        diffs.sort_by(f64::total_cmp);
        let p99 = diffs[(diffs.len() as f64 * 0.99) as usize];
        Agreement { share, p99, mean, worst }
    }

    fn srgb_grid(n: usize) -> Vec<[f64; 3]> {
        (0..n.pow(3))
            .map(|i| [i / (n * n), i / n % n, i % n].map(|v| v as f64 / (n - 1) as f64))
            .collect()
    }

    #[test]
    fn srgb_through_lcms2_agrees_with_the_separation() {
        // The check: lcms2's sRGB → profile transform against
        // platesmith's own separation (the table `separate` builds) on a 17³
        // grid of sRGB: within 1 % ink per channel on ≥ 99 %.
        let rgb = srgb_grid(17);
        for intent in [SepIntent::Relative, SepIntent::Perceptual] {
            let table = separation_table(intent);
            for version in VERSIONS {
                let p = Profile::new_icc(profile(version)).unwrap();
                let mut theirs = vec![[0.0; 4]; rgb.len()];
                srgb_to_cmyk(&p, lcms_intent(intent)).transform_pixels(&rgb, &mut theirs);
                let a = agreement(&rgb, &theirs, &table);
                println!(
                    "{version:?} {intent:?}: sRGB 17³ through lcms2 vs separation table: {:.2} % within 1 % ink, 99th percentile {:.2} %, mean {:.3} %, worst {:.2} % at RGB {:?}",
                    a.share * 100.0,
                    a.p99,
                    a.mean,
                    a.worst.0,
                    a.worst.1.map(|x| (x * 255.0).round())
                );
                match version {
                    // lcms2 reads the floating-point BToD tables, whose CLUT
                    // has the separation table's nodes among its own.
                    IccVersion::V4 => {
                        assert!(
                            a.share >= 0.99,
                            "{version:?} {intent:?}: only {:.2} % within 1 % ink",
                            a.share * 100.0
                        );
                        // The worst single node: 3.12 % at RGB 16/16/0 on
                        // coated-offset refitted with the lattice's mixed
                        // differences (2.00 % on the earlier fit, 0.12 %
                        // with the aims from memory), at one of 4 913 nodes.
                        assert!(
                            a.worst.0 <= 3.2 && a.mean <= 0.05,
                            "{version:?} {intent:?}: worst {:.2} %, mean {:.3} %",
                            a.worst.0,
                            a.mean
                        );
                    }
                    // Version 2 has only the 16-bit BToA tables: a 33³ CIELAB
                    // grid interpolates across the creases of the separation
                    // (where an ink reaches 0 or 100 % the others change
                    // slope), which run through much of the gamut. What they
                    // achieve is held here, so a regression fails; the
                    // perceptual map curves more and interpolates less well.
                    IccVersion::V2 => {
                        let (min_share, max_p99, max_mean) = match intent {
                            SepIntent::Relative => (0.80, 6.5, 0.7),
                            _ => (0.48, 11.5, 1.8),
                        };
                        assert!(
                            a.share >= min_share,
                            "{version:?} {intent:?}: only {:.2} % within 1 % ink",
                            a.share * 100.0
                        );
                        assert!(
                            a.p99 <= max_p99 && a.mean <= max_mean,
                            "{version:?} {intent:?}: 99th percentile {:.2} %, mean {:.3} %",
                            a.p99,
                            a.mean
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn float_tables_separate_srgb_as_platesmith_does_between_nodes_too() {
        // Off the grid, lcms2's float transform and platesmith's table both
        // interpolate tetrahedrally over the same nodes; and an application
        // using lcms2 on 8-bit pixels (its default precalculated device link,
        // 33³ for RGB input, cmsxform.c/cmsopt.c) gets the same plates as
        // `separate` to within rounding.
        let p = Profile::new_icc(profile(IccVersion::V4)).unwrap();
        let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
        let rgb: Vec<[f64; 3]> = (0..20_000).map(|_| [rng.unit(), rng.unit(), rng.unit()]).collect();
        let pixels: Vec<[u8; 3]> = (0..20_000)
            .map(|_| [rng.unit(), rng.unit(), rng.unit()].map(|v| (v * 255.0).round() as u8))
            .collect();
        for intent in [SepIntent::Relative, SepIntent::Perceptual] {
            let table = separation_table(intent);
            let mut theirs = vec![[0.0; 4]; rgb.len()];
            srgb_to_cmyk(&p, lcms_intent(intent)).transform_pixels(&rgb, &mut theirs);
            let a = agreement(&rgb, &theirs, &table);
            println!(
                "{intent:?}: 20 000 random sRGB colours: {:.2} % within 1 % ink, worst {:.3} %, mean {:.4} %",
                a.share * 100.0,
                a.worst.0,
                a.mean
            );
            assert!(
                a.share >= 0.999 && a.worst.0 <= 1.0,
                "{intent:?}: {:.2} %, worst {:.3} %",
                a.share * 100.0,
                a.worst.0
            );

            let eight: Transform<[u8; 3], [u8; 4], GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
                GlobalContext::new(),
                &Profile::new_srgb_context(GlobalContext::new()),
                PixelFormat::RGB_8,
                &p,
                PixelFormat::CMYK_8,
                lcms_intent(intent),
                Flags::NO_CACHE,
            )
            .unwrap();
            let mut lcms_out = vec![[0u8; 4]; pixels.len()];
            eight.transform_pixels(&pixels, &mut lcms_out);
            let flat: Vec<u8> = pixels.iter().flatten().copied().collect();
            let mut ours = vec![0u8; pixels.len() * 4];
            table.apply_rgb8(&flat, &mut ours, pixels.len());
            let diffs: Vec<i32> = ours
                .iter()
                .zip(lcms_out.iter().flatten())
                .map(|(&a, &b)| (a as i32 - b as i32).abs())
                .collect();
            let within = diffs.iter().filter(|&&d| d <= 1).count() as f64 / diffs.len() as f64;
            let max = diffs.iter().copied().max().unwrap();
            println!(
                "{intent:?}: 8-bit through lcms2's device link vs separate: {:.3} % of channels within 1 code, largest {max} codes",
                within * 100.0
            );
            // The largest difference is 4 codes on the coated-offset refit
            // with the lattice's mixed differences (3 before it), where the
            // deep shadows change steeply between nodes; 99.997 % of the
            // channels are within 1 code.
            assert!(
                within >= 0.995 && max <= 4,
                "{intent:?}: {:.3} % within 1 code, largest {max}",
                within * 100.0
            );
        }
    }

    /// The type signature of a tag in a profile's tag table (ICC.1:2022 §7.3).
    fn tag_type(bytes: &[u8], sig: &[u8; 4]) -> Option<[u8; 4]> {
        let word = |at: usize| u32::from_be_bytes(bytes[at..at + 4].try_into().unwrap()) as usize;
        (0..word(128))
            .map(|i| 132 + 12 * i)
            .find(|&e| &bytes[e..e + 4] == sig)
            .map(|e| bytes[word(e + 4)..word(e + 4) + 4].try_into().unwrap())
    }

    #[test]
    fn float_tables_are_written_in_v4_only_and_the_16_bit_tables_stay() {
        let v4 = profile(IccVersion::V4);
        for sig in [b"B2D0", b"B2D1", b"B2D2"] {
            assert_eq!(tag_type(v4, sig), Some(*b"mpet"), "{}", String::from_utf8_lossy(sig));
        }
        for sig in [b"B2A0", b"B2A1", b"B2A2"] {
            assert_eq!(tag_type(v4, sig), Some(*b"mBA "), "{}", String::from_utf8_lossy(sig));
            assert_eq!(tag_type(profile(IccVersion::V2), sig), Some(*b"mft2"));
        }
        // D2Bx would take precedence over AToB in lcms2; none is written.
        assert_eq!(tag_type(v4, b"D2B0"), None);
        assert_eq!(tag_type(profile(IccVersion::V2), b"B2D1"), None);

        // What a CMM without float support gets from the v4 profile: its
        // 16-bit BToA1 table, evaluated directly, against the separation
        // (sRGB → CIELAB by IEC 61966-2-1, checked against lcms2 in
        // tests/suite/colour_lcms2.rs). Held at its measured level.
        let p = Profile::new_icc(v4).unwrap();
        let Tag::Pipeline(b2a1) = p.read_tag(TagSignature::BToA1Tag) else {
            panic!("no B2A1")
        };
        let conv = platesmith::colour::RgbSpace::Srgb.converter();
        let rgb = srgb_grid(17);
        let theirs: Vec<[f64; 4]> = rgb
            .iter()
            .map(|&v| {
                let mut out = [0u16; 4];
                b2a1.eval(
                    &encode_lab(conv.to_lab(platesmith::colour::EncodedRgb(v)), IccVersion::V4),
                    &mut out,
                );
                out.map(|c| c as f64 / 655.35)
            })
            .collect();
        let a = agreement(&rgb, &theirs, &separation_table(SepIntent::Relative));
        println!(
            "V4 16-bit BToA1: {:.2} % within 1 % ink, 99th percentile {:.2} %, mean {:.3} %",
            a.share * 100.0,
            a.p99,
            a.mean
        );
        assert!(
            a.share >= 0.80 && a.p99 <= 6.5 && a.mean <= 0.7,
            "{:.2} % {:.2} {:.3}",
            a.share * 100.0,
            a.p99,
            a.mean
        );
    }

    #[test]
    fn lcms2_output_keeps_the_ink_limit() {
        // Any colour, any intent: lcms2's CMYK from the profile stays within the
        // TAC + 1 % (the check; tetrahedral interpolation of in-limit
        // nodes stays in the limit, ICC.1:2022 leaves interpolation to the CMM).
        let tac = settings(SepIntent::Perceptual).tac * 100.0;
        let mut rng = Rng(0x5151_7a7a_0101_3c3c);
        let labs: Vec<[f64; 3]> = (0..20_000)
            .map(|_| [rng.unit() * 100.0, rng.unit() * 256.0 - 128.0, rng.unit() * 256.0 - 128.0])
            .collect();
        let rgbs: Vec<[f64; 3]> = (0..20_000).map(|_| [rng.unit(), rng.unit(), rng.unit()]).collect();
        for version in VERSIONS {
            let p = Profile::new_icc(profile(version)).unwrap();
            for intent in [
                Intent::Perceptual,
                Intent::RelativeColorimetric,
                Intent::Saturation,
                Intent::AbsoluteColorimetric,
            ] {
                let from_lab: Transform<[f64; 3], [f64; 4], GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
                    GlobalContext::new(),
                    &lab_profile(),
                    PixelFormat::Lab_DBL,
                    &p,
                    PixelFormat::CMYK_DBL,
                    intent,
                    Flags::NO_CACHE,
                )
                .unwrap();
                let mut out = vec![[0.0; 4]; labs.len()];
                from_lab.transform_pixels(&labs, &mut out);
                let mut worst = out.iter().map(|c| c.iter().sum::<f64>()).fold(0.0, f64::max);
                // sRGB through lcms2's default (optimised) path as an application would use it.
                let from_rgb: Transform<[f64; 3], [f64; 4], GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
                    GlobalContext::new(),
                    &Profile::new_srgb_context(GlobalContext::new()),
                    PixelFormat::RGB_DBL,
                    &p,
                    PixelFormat::CMYK_DBL,
                    intent,
                    Flags::NO_CACHE,
                )
                .unwrap();
                from_rgb.transform_pixels(&rgbs, &mut out);
                worst = worst.max(out.iter().map(|c| c.iter().sum::<f64>()).fold(0.0, f64::max));
                println!("{version:?} {intent:?}: largest total ink from lcms2 {worst:.2} % (limit {tac:.0} %)");
                assert!(worst <= tac + 1.0, "{version:?} {intent:?}: {worst:.2} %");
            }
        }
    }

    #[test]
    fn atob_tables_match_the_press_model() {
        let sep = Separator::new(coated_offset(), settings(SepIntent::Relative)).unwrap();
        let mut rng = Rng(0x0f0f_1234_a5a5_9876);
        let inks: Vec<Cmyk> = (0..5000).map(|_| rng.cmyk()).collect();
        for version in VERSIONS {
            let p = Profile::new_icc(profile(version)).unwrap();
            let relative = cmyk_to_lab(&p, Intent::RelativeColorimetric);
            let absolute = cmyk_to_lab(&p, Intent::AbsoluteColorimetric);
            let rel: Vec<f64> = inks
                .iter()
                .map(|&ink| ciede2000(lcms2_lab(&relative, ink), sep.printed_relative(ink).lab()))
                .collect();
            let abs: Vec<f64> = inks
                .iter()
                .map(|&ink| ciede2000(lcms2_lab(&absolute, ink), sep.printed_absolute(ink).lab()))
                .collect();
            let ((rm, rx), (am, ax)) = (stats(&rel), stats(&abs));
            println!("{version:?}: AToB1 vs press model ΔE2000 mean {rm:.3} max {rx:.3}; absolute mean {am:.3} max {ax:.3}");
            // The issue: mean ≤ 0.5 ΔE2000.
            assert!(rm <= 0.5 && am <= 0.5, "{version:?}: {rm} {am}");
            // Perceptual AToB0: the press black lands on the PCS black, the
            // reference medium black in v4 (ICC.1:2022 §6.2.4.3), L* 0 in v2;
            // paper stays at L* 100.
            // Read from the stored AToB0 table itself: an lcms2 transform to a
            // Lab profile would apply its own v4 black point compensation.
            let Tag::Pipeline(a2b0) = p.read_tag(TagSignature::AToB0Tag) else {
                panic!("no A2B0")
            };
            let perceptual = |ink: Cmyk| {
                let mut out = [0u16; 3];
                a2b0.eval(&ink.to_array().map(platesmith::icc::encode_unit), &mut out);
                platesmith::icc::decode_lab(out, version)
            };
            let (bp_lab, bp_ink) = sep.black_point();
            let black = perceptual(bp_ink);
            let want = match version {
                IccVersion::V4 => {
                    Lab::from_xyz(platesmith::colour::Xyz::new(
                        PERCEPTUAL_REFERENCE_BLACK.x,
                        PERCEPTUAL_REFERENCE_BLACK.y,
                        PERCEPTUAL_REFERENCE_BLACK.z,
                    ))
                    .l
                }
                IccVersion::V2 => 0.0,
            };
            println!(
                "{version:?}: press black L* {:.2} → perceptual PCS L* {:.2}",
                bp_lab.lab().l,
                black.l
            );
            // The black build lies between nodes of the 17⁴ table, where CIELAB
            // bends most (near L* 0 it turns linear): 0.6 L* of interpolation.
            assert!((black.l - want).abs() < 0.6, "{version:?}: {black:?}");
            assert!((perceptual(Cmyk::ZERO).l - 100.0).abs() < 0.01);
        }
    }

    #[test]
    fn gamut_tag_marks_what_the_press_cannot_print() {
        // lcms2's gamut check (cmsFLAGS_GAMUTCHECK through the profile's gamt
        // tag) flags a saturated sRGB blue and not a mid grey or a printed build.
        let sep = Separator::new(coated_offset(), settings(SepIntent::Relative)).unwrap();
        for version in VERSIONS {
            let p = Profile::new_icc(profile(version)).unwrap();
            let Tag::Pipeline(gamut) = p.read_tag(TagSignature::GamutTag) else {
                panic!("no gamt")
            };
            let code = |lab: Lab| {
                let mut out = [0u16];
                gamut.eval(&encode_lab(lab, version), &mut out);
                out[0]
            };
            let printed = sep.printed_relative(Cmyk::new(0.4, 0.3, 0.2, 0.1)).lab();
            assert_eq!(code(printed), 0, "{version:?}");
            assert_eq!(code(Lab::new(50.0, 0.0, 0.0)), 0, "{version:?}");
            // sRGB blue (lcms2 gives L* 29.6 a* 68.3 b* −112.0 relative to D50) lies
            // about 30 ΔE2000 outside a coated offset gamut.
            let blue = platesmith::colour::RgbSpace::Srgb
                .converter()
                .to_lab(platesmith::colour::EncodedRgb([0.0, 0.0, 1.0]));
            let outside = code(blue);
            let measured = ciede2000(
                blue,
                sep.printed_relative(Cmyk::from_array(sep.invert(RelativeLab::new(blue), None).x))
                    .lab(),
            );
            println!("{version:?}: sRGB blue gamut code {outside}, ΔE2000 to the clipped print {measured:.1}");
            assert!(
                outside >= 5 && (outside as f64 - measured).abs() <= 3.0,
                "{version:?}: {outside} vs {measured:.1}"
            );
        }
    }
}
