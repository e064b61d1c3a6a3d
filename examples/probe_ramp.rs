use platesmith::colour::*;
use platesmith::separation::*;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let s = SeparationSettings::for_condition(&cond);
    let sep = Separator::new(cond, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv);
    let m = sep.source_mapping(&gg);
    for (r, g) in [(5usize, 5usize), (6, 6), (4,4)] {
        let mut prev = None;
        for b in 0..=7 {
            let rgb = [r as f64/32.0, g as f64/32.0, b as f64/32.0];
            let t = sep.intent_target(conv.to_lab(EncodedRgb(rgb)), &m);
            let w = sep.invert(t, prev);
            let c = sep.invert(t, None);
            prev = Some(w.x);
            let q = platesmith::ink::Cmyk::from_array(w.x).to_percent();
            let p = platesmith::ink::Cmyk::from_array(c.x).to_percent();
            println!("({r},{g},{b}) tgt {:.2} {:.2} {:.2} warm {:.1} {:.1} {:.1} {:.1} cold {:.1} {:.1} {:.1} {:.1}", t.l, t.a, t.b, q[0],q[1],q[2],q[3], p[0],p[1],p[2],p[3]);
        }
    }
}
