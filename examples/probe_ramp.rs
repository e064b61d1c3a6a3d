use platesmith::colour::*;
use platesmith::separation::*;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let s = SeparationSettings::for_condition(&cond);
    let sep = Separator::new(cond, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv);
    let m = sep.source_mapping(&gg);
    for i in 5..=12 {
        let v = i as f64 / 32.0;
        let t = sep.intent_target(conv.to_lab(EncodedRgb([v, v, v])), &m);
        let r = sep.invert(t, None);
        let p = platesmith::ink::Cmyk::from_array(r.x).to_percent();
        println!("{:5.1} tgt {:.2} {:.3} {:.3} -> {:.1} {:.1} {:.1} {:.1} share {:.3}", v*255.0, t.l, t.a, t.b, p[0],p[1],p[2],p[3], sep.black_share(((100.0 - t.l)/(100.0 - sep.black_point().0.l)).clamp(0.0,1.0)));
    }
}
