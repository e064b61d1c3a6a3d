use platesmith::colour::*;
use platesmith::separation::*;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let mut s = SeparationSettings::for_condition(&cond);
    if let Some(i) = std::env::args().nth(1) { s.intent = match i.as_str() { "rel" => Intent::Relative, "abs" => Intent::Absolute, _ => Intent::Perceptual }; }
    let t = std::time::Instant::now();
    let sep = Separator::new(cond, s).unwrap();
    println!("build {:?}; black point {:?}; volume {:.0}", t.elapsed(), sep.black_point(), sep.gamut().volume());
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv); let g = sep.source_mapping(&gg);
    for rgb in [[1.,1.,1.],[0.,0.,0.],[1.,0.,0.],[0.,1.,0.],[0.,0.,1.],[0.5,0.5,0.5],[0.8,0.8,0.8],[0.2,0.2,0.2],[0.,1.,1.],[1.,0.,1.],[1.,1.,0.],[0.9,0.6,0.4]] {
        let lab = conv.to_lab(EncodedRgb(rgb));
        let t = std::time::Instant::now();
        let r = sep.separate(lab, &g);
        let p = r.cmyk.to_percent();
        println!("{rgb:?} lab {:.1} {:.1} {:.1} -> {:.1} {:.1} {:.1} {:.1} (tac {:.0}) printed {:.1} {:.1} {:.1} dE {:.2} in {} {:?} [{:?}]", lab.l, lab.a, lab.b, p[0],p[1],p[2],p[3], r.cmyk.total_percent(), r.printed.l, r.printed.a, r.printed.b, r.delta_e, r.in_gamut, r.limited_by.iter().collect::<Vec<_>>(), t.elapsed());
    }
}
