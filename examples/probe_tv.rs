use platesmith::colour::*;
use platesmith::separation::*;
use platesmith::ink::Cmyk;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let mut s = SeparationSettings::for_condition(&cond);
    s.intent = Intent::Relative;
    let sep = Separator::new(cond, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv);
    let m = sep.source_mapping(&gg);
    let table = SeparationTable::build(&sep, &m, &|rgb| conv.to_lab(EncodedRgb(rgb)));
    let mut seed = 2u64;
    let mut rnd = || { seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407); (seed >> 11) as f64 / (1u64 << 53) as f64 };
    let mut worst = vec![];
    for _ in 0..10000 {
        let rgb = [rnd(), rnd(), rnd()];
        let t = sep.intent_target(conv.to_lab(EncodedRgb(rgb)), &m);
        let d = sep.invert(t, None);
        let pd = sep.printed_relative(Cmyk::from_array(d.x));
        let tc = table.lookup(rgb);
        let pt = sep.printed_relative(tc);
        worst.push((ciede2000(pd, pt), rgb, t, d.x, tc, d.colour_error));
    }
    worst.sort_by(|a, b| b.0.total_cmp(&a.0));
    for w in &worst[..8] { println!("{:.2} rgb {:.3?} tgt {:.1} {:.1} {:.1} direct {:.3?} (err {:.2}) table {:.3?}", w.0, w.1, w.2.l, w.2.a, w.2.b, w.3, w.5, w.4.to_array()); }
}
