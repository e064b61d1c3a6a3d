use platesmith::colour::*;
use platesmith::separation::*;
fn main() {
    let cond = platesmith::press::builtin::coated_offset();
    let mut s = SeparationSettings::for_condition(&cond);
    if let Some(g) = std::env::args().nth(1) { s.table_grid = g.parse().unwrap(); }
    let sep = Separator::new(cond, s).unwrap();
    let conv = RgbSpace::Srgb.converter();
    let gg = RgbGamut(conv);
    let t = std::time::Instant::now();
    let m = sep.source_mapping(&gg);
    println!("mapping {:?}", t.elapsed());
    let table = SeparationTable::build(&sep, &m, &|rgb| conv.to_lab(EncodedRgb(rgb)));
    println!("table {:?}", t.elapsed());
    let w = 4000; let h = 2500;
    let rgb: Vec<u8> = (0..w*h*3).map(|i| ((i * 7919) % 251) as u8).collect();
    let mut out = vec![0u8; w*h*4];
    let t = std::time::Instant::now();
    table.apply_rgb8(&rgb, &mut out, w);
    let e = t.elapsed();
    println!("apply {:?} = {:.1} Mpx/s", e, (w*h) as f64 / e.as_secs_f64() / 1e6);
}
