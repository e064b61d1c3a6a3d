//! Speed of the press model of every built-in condition, with and without its
//! lattice correction, side by side in one run (evaluations per second on one
//! thread), and the time of building the default separation table.
//!
//!     cargo run --release --example press_speed [ROUNDS [BUILDS]]
//!
//! ROUNDS (default 200) passes over the 4096 builds per rate, BUILDS
//! (default 3) table builds; small values for counting instructions under
//! `valgrind --tool=callgrind`.

use platesmith::colour::RgbSpace;
use platesmith::ink::Cmyk;
use platesmith::press::{CorrectedModel, PressModel, builtin};
use platesmith::separation::IntentLab;
use platesmith::separation::{Intent, RgbGamut, SeparationSettings, SeparationTable, Separator};
use std::hint::black_box;
use std::time::Instant;

fn rate(model: &dyn PressModel, inks: &[Cmyk], jacobian: bool, rounds: usize) -> f64 {
    let start = Instant::now();
    let mut acc = 0.0;
    for _ in 0..rounds {
        for &ink in inks {
            acc += if jacobian {
                model.lab_jacobian(black_box(ink)).1[0][3]
            } else {
                model.lab(black_box(ink)).l
            };
        }
    }
    black_box(acc);
    (rounds * inks.len()) as f64 / start.elapsed().as_secs_f64()
}

fn main() {
    let arg = |i: usize, default: usize| std::env::args().nth(i).and_then(|a| a.parse().ok()).unwrap_or(default);
    let (rounds, builds) = (arg(1, 200), arg(2, 3));
    // The same 4096 low-discrepancy builds as benches/press_model.rs.
    let inks: Vec<Cmyk> = (0..4096)
        .map(|i| {
            let f = |a: f64| (i as f64 * a).fract();
            Cmyk::new(f(0.618_033_988_7), f(0.754_877_666_2), f(0.569_840_290_9), f(0.441_487_542_1))
        })
        .collect();
    println!("condition            Lab M/s (physics only / with correction)   Jacobian M/s (physics / with correction)");
    for c in builtin::all() {
        let physics = match &c.params {
            Some(p) => CorrectedModel::new(p.model(), None),
            None => continue,
        };
        let full = c.model.as_ref();
        println!(
            "{:<20} {:>6.1} / {:>6.1}                          {:>6.1} / {:>6.1}",
            c.name,
            rate(&physics, &inks, false, rounds) / 1e6,
            rate(full, &inks, false, rounds) / 1e6,
            rate(&physics, &inks, true, rounds) / 1e6,
            rate(full, &inks, true, rounds) / 1e6
        );
    }
    // The default table (perceptual, grid 33) of benches/separation.rs.
    let c = builtin::coated_offset();
    let mut settings = SeparationSettings::for_condition(&c);
    settings.intent = Intent::Perceptual;
    settings.table_grid = 33;
    let sep = Separator::new(c.clone(), settings).expect("built-in settings are valid");
    let conv = RgbSpace::Srgb.converter();
    let gamut = RgbGamut(conv);
    for _ in 0..builds {
        let start = Instant::now();
        let mapping = sep.source_mapping(&gamut);
        let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
        black_box(&table);
        println!(
            "default table build (coated-offset, perceptual, grid 33): {:.3} s",
            start.elapsed().as_secs_f64()
        );
    }
}
