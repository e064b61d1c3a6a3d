use platesmith::colour::*;
use platesmith::separation::*;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let s = SeparationSettings::for_condition(&cond);
    let sep = Separator::new(cond, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv);
    let m = sep.source_mapping(&gg);
    println!("primaries {:?}", sep.process_primaries().map(|l| { let c = l.to_lch(); (c.l.round(), c.c.round(), c.h.round()) }));
    for rgb in [[1.,1.,0.],[0.,1.,1.],[0.9,0.9,0.],[1.,1.,0.5]] {
        let lab = conv.to_lab(EncodedRgb(rgb));
        let t = sep.intent_target(lab, &m).to_lch();
        println!("{rgb:?} src {:?} -> tgt {:.1} {:.1} {:.1}; cusp {:?}; cmax at tgt {:.1}", lab.to_lch(), t.l, t.c, t.h, sep.gamut().cusp(t.h), sep.gamut().max_chroma(t.l, t.h));
    }
}
