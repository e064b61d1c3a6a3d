use platesmith::ink::Cmyk;
use platesmith::press::PressModel;
fn main() {
    let c = platesmith::press::builtin::coated_offset();
    for p in [[0.,0.,0.,0.],[100.,100.,100.,100.],[100.,100.,100.,0.],[0.,0.,0.,100.],[60.,40.,40.,100.],[50.,40.,40.,0.],[50.,0.,0.,0.],[0.,0.,0.,50.]] {
        let lab = c.model.lab(Cmyk::from_percent(p));
        println!("{p:?} -> {:.2} {:.2} {:.2}", lab.l, lab.a, lab.b);
    }
    let t = std::time::Instant::now();
    let mut s = 0.0;
    let n = 5_000_000;
    for i in 0..n { let f = (i % 1000) as f64 / 1000.0; s += c.model.lab(Cmyk::new(f, 1.0-f, f*0.5, 0.3)).l; }
    println!("{:.1} M/s ({s})", n as f64 / t.elapsed().as_secs_f64() / 1e6);
}
