use sim_core::scenario::template;
use sim_core::simulate::{simulate, RunOptions};
fn main() {
    let s = template();
    let t = std::time::Instant::now();
    let r = simulate(&s, &RunOptions::default()).unwrap();
    println!("{:?}", t.elapsed());
    println!("{:#?}", r.metrics);
    println!("{:#?} {:#?} {:#?}", r.steady, r.fit, r.stats);
    println!("{:?}", r.warnings);
}
