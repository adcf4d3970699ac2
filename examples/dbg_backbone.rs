use phasewright::core::Cancel;
use phasewright::core::backbone::{BackboneConfig, backbone};
use phasewright::core::system::System;
use phasewright::core::window::Window;
fn main() {
    let args: Vec<String> = std::env::args().collect();
    let sys = System::from_source(&args[1], &[]).unwrap();
    let w = Window::new(-4.0, 4.0, -3.0, 3.0).unwrap();
    let mut cfg = BackboneConfig::default();
    cfg.energies = args[2].parse().unwrap();
    let t = std::time::Instant::now();
    let b = backbone(&sys, [0.0, 0.0], &w, &cfg, &Cancel::never(), &|i, n| {
        eprintln!("{i}/{n}")
    })
    .unwrap();
    println!("{:?} {:?} {:?}", t.elapsed(), b.escape_energy, b.top_energy);
    for r in b.rows.iter().take(5) {
        println!("{r:?}");
    }
    println!("{:?}", b.rows.last());
}
