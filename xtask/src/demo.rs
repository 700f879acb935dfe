//! `cargo xtask gen-demo`: the deterministic generator of the recycling-line demo data.

pub fn run(_args: &[String]) -> anyhow::Result<()> {
    anyhow::bail!("gen-demo: not written yet")
}
