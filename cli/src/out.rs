//! `--out DIR`: the tables as CSV and the figures as SVG, drawn by the same
//! `tussock-charts` functions and at the same size as the app's downloads,
//! so batch work gives the browser's figures. Each file written is named on
//! stderr (`tussock: wrote DIR/NAME`), leaving stdout to the usual output.

use std::path::{Path, PathBuf};

use anyhow::{Context, Result};

/// Size of the figures, in pixels: the app's export size. Figures are
/// drawn with `tussock_charts::to_svg(WIDTH, HEIGHT, …)` at scale 1, as the
/// app's SVG downloads are.
pub const WIDTH: u32 = 900;
pub const HEIGHT: u32 = 520;

/// A directory the files go to, made when it is opened.
pub struct OutDir {
    dir: PathBuf,
}

impl OutDir {
    /// Make `dir` (and its parents) if missing. Called before the work
    /// starts, so a bad path fails at once rather than after a long run.
    pub fn create(dir: &Path) -> Result<OutDir> {
        std::fs::create_dir_all(dir)
            .with_context(|| format!("--out: cannot create {}", dir.display()))?;
        Ok(OutDir {
            dir: dir.to_path_buf(),
        })
    }

    /// Open the directory of an optional `--out`.
    pub fn open(dir: Option<&PathBuf>) -> Result<Option<OutDir>> {
        dir.map(|d| OutDir::create(d)).transpose()
    }

    /// Write one file and say so on stderr.
    pub fn write(&self, name: &str, contents: &str) -> Result<()> {
        let path = self.dir.join(name);
        std::fs::write(&path, contents)
            .with_context(|| format!("--out: cannot write {}", path.display()))?;
        eprintln!("tussock: wrote {}", path.display());
        Ok(())
    }

    /// Write a drawn figure (the SVG text, or why it could not be drawn).
    pub fn figure(&self, name: &str, svg: Result<String, String>) -> Result<()> {
        let svg = svg.map_err(|e| anyhow::anyhow!("cannot draw {name}: {e}"))?;
        self.write(name, &svg)
    }
}

/// A file name part ([`tussock_charts::slug`]), `species` when nothing is left.
pub fn slug(text: &str) -> String {
    tussock_charts::slug(text, "species")
}

/// A file name part per species, from its name, distinct even when two
/// names give the same slug (`mite`, `mite-2`).
pub fn species_stems(species: &[String]) -> Vec<String> {
    let mut stems: Vec<String> = Vec::new();
    for name in species {
        let base = slug(name);
        let mut stem = base.clone();
        let mut n = 2;
        while stems.contains(&stem) {
            stem = format!("{base}-{n}");
            n += 1;
        }
        stems.push(stem);
    }
    stems
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn file_names_are_plain_and_distinct() {
        assert_eq!(
            slug("Spider mite / predatory mite"),
            "spider-mite-predatory-mite"
        );
        assert_eq!(slug("../x"), "x");
        assert_eq!(slug("∅"), "species");
        let names = ["Mite".to_string(), "mite!".to_string(), "∅".to_string()];
        assert_eq!(species_stems(&names), ["mite", "mite-2", "species"]);
    }
}
