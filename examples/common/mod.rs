//! What the example programs share: a small deterministic generator, so that invented data never
//! changes, and the command-line shape of the class generators (`OUT [ROWS] [SECTIONS]`).

#![allow(dead_code)] // each example uses the part it needs

/// A 64-bit linear congruential generator (Knuth's MMIX constants).
pub struct Lcg(pub u64);

impl Lcg {
    pub fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }

    pub fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }

    pub fn pick<'a>(&mut self, items: &'a [&'a str]) -> &'a str {
        items[(self.next() * items.len() as f64) as usize % items.len()]
    }
}

/// `OUT [ROWS] [SECTIONS]` from the command line: defaults 100,000 rows over 8 sections.
pub fn out_rows_sections(
    usage: &str,
) -> Result<(String, usize, usize), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let out = args.get(1).ok_or(usage.to_string())?.clone();
    let rows: usize = args
        .get(2)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(100_000);
    let sections: usize = args
        .get(3)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(8)
        .max(1);
    Ok((out, rows, sections))
}
