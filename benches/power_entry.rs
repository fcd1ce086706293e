//! Benchmarks of the power-entry evaluation (divan). Run `cargo bench --bench power_entry`.

fn main() {
    divan::main();
}
