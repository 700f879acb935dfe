//! `cargo xtask build-web` and `cargo xtask serve`: build the page and serve it locally.

use std::path::PathBuf;

pub fn build(_args: &[String]) -> anyhow::Result<PathBuf> {
    anyhow::bail!("build-web: not written yet")
}

pub fn serve(_args: &[String]) -> anyhow::Result<()> {
    anyhow::bail!("serve: not written yet")
}
