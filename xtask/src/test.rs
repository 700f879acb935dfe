//! `cargo xtask test`: every test the project has, provisioning what they need.

pub fn run(_args: &[String]) -> anyhow::Result<()> {
    anyhow::bail!("test: not written yet")
}
