//! The field population's baseline (issue 10): every simulated real unit of
//! tests/reference/field_population.csv diagnosed against its supply's file, with the winding
//! resistance stated and left out; prints false alarms, detection, the breakdowns and the misses.
//!
//!     cargo run --release --example field_population

#[path = "../tests/common/field.rs"]
mod field;

use anyhow::anyhow;

fn main() -> anyhow::Result<()> {
    let units = field::population().map_err(|e| anyhow!(e))?;
    println!(
        "{} units from {}",
        units.len(),
        field::CSV_PATH
            .rsplit('/')
            .next()
            .unwrap_or(field::CSV_PATH)
    );
    for variant in field::Variant::BOTH {
        let tally = field::tally(&units, variant).map_err(|e| anyhow!(e))?;
        println!();
        print!("{}", field::report(&tally));
    }
    let with_rms = field::with_scope_rms(&units);
    for variant in field::Variant::BOTH {
        let tally = field::tally(&with_rms, variant).map_err(|e| anyhow!(e))?;
        println!();
        println!("(with the scope's ripple RMS read as well)");
        print!("{}", field::report(&tally));
    }
    Ok(())
}
