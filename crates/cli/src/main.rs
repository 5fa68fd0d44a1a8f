//! The `beamfloor` command: thin argument parsing over `beamfloor-experiment`.
fn main() {
    println!("beamfloor: under construction");
}
