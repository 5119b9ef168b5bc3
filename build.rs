//! Links the `benchgrade` binary as a fixed-address executable on Linux: a position-independent
//! one carries about 67,000 relocations that the loader applies at every start, a few
//! milliseconds of a one-section run (measured with perf; DEVELOPERS.md, "Speed"). The library
//! and the tests are unaffected.

fn main() {
    println!("cargo:rerun-if-changed=build.rs");
    let linux = std::env::var("CARGO_CFG_TARGET_OS").is_ok_and(|os| os == "linux");
    if linux {
        println!("cargo:rustc-link-arg-bins=-no-pie");
    }
}
