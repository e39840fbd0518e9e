//! The library of parts on disk: walking the tree (every `*.sNp` and `*.ts`), part
//! names as `/`-separated paths relative to the root, and finding each part's
//! sidecar `NAME.part.yaml` (the rules module reads it and resolves the values).
//!
//! Knows nothing of figures or of the rules language.

mod walk;

use std::path::{Path, PathBuf};

pub use walk::{
    is_touchstone_name, ports_from_name, rel_name, walk, PartFile, Sidecar, Walk, WalkError,
    WalkOptions, CACHE_DIR,
};

/// Suffix of a sidecar file: `L1p2n_pgs.s2p` has `L1p2n_pgs.part.yaml` beside it.
pub const SIDECAR_SUFFIX: &str = ".part.yaml";

/// The sidecar file of a part, if there is one.
///
/// `NAME` is the file name without its Touchstone extension (`coil.s2p` →
/// `coil.part.yaml`); the full file name (`coil.s2p.part.yaml`) is accepted too, for
/// folders holding `coil.s2p` and `coil.s4p` side by side. When both exist, the one
/// with the full name wins because it is the more specific.
pub fn sidecar_path(part: &Path) -> Option<PathBuf> {
    let name = part.file_name()?.to_string_lossy().into_owned();
    let dir = part.parent().unwrap_or(Path::new(""));
    let full = dir.join(format!("{name}{SIDECAR_SUFFIX}"));
    if full.is_file() {
        return Some(full);
    }
    let stem = match name.rfind('.') {
        Some(dot) if dot > 0 => &name[..dot],
        _ => return None,
    };
    let short = dir.join(format!("{stem}{SIDECAR_SUFFIX}"));
    short.is_file().then_some(short)
}

/// The file name of a part (last component of its relative name), which the rules'
/// `from_name` patterns are matched against.
pub fn file_name(rel: &str) -> &str {
    rel.rsplit('/').next().unwrap_or(rel)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sidecars_by_stem_or_full_name() {
        let d = tempfile::tempdir().unwrap();
        let part = d.path().join("L1p2n.s2p");
        std::fs::write(&part, "x").unwrap();
        assert_eq!(sidecar_path(&part), None);
        std::fs::write(d.path().join("L1p2n.part.yaml"), "band: 1GHz .. 2GHz\n").unwrap();
        assert_eq!(sidecar_path(&part), Some(d.path().join("L1p2n.part.yaml")));
        std::fs::write(d.path().join("L1p2n.s2p.part.yaml"), "x").unwrap();
        assert_eq!(
            sidecar_path(&part),
            Some(d.path().join("L1p2n.s2p.part.yaml"))
        );
    }

    #[test]
    fn file_names_of_parts() {
        assert_eq!(file_name("coils/rf/L1p2n.s2p"), "L1p2n.s2p");
        assert_eq!(file_name("top.s1p"), "top.s1p");
    }
}
