//! The Python writer (`python/vetscore_record`) validates manifests against its copy of the JSON
//! Schema; that copy must be what `vetscore schema manifest` prints. After a change to the
//! manifest format: `VETSCORE_BLESS=1 cargo test --test python_schema`.

#![allow(clippy::unwrap_used)]

mod common;

use common::{stdout, vetscore};

#[test]
fn the_python_package_keeps_the_manifest_schema_in_sync() {
    let output = vetscore(&["schema", "manifest"]);
    assert_eq!(output.status.code(), Some(0));
    let printed = stdout(&output);
    let copy = common::root().join("python/vetscore_record/manifest.schema.json");
    if std::env::var_os("VETSCORE_BLESS").is_some() {
        std::fs::write(&copy, &printed).unwrap();
    }
    let kept = std::fs::read_to_string(&copy).unwrap();
    assert!(
        kept == printed,
        "python/vetscore_record/manifest.schema.json differs from `vetscore schema manifest`; \
         run VETSCORE_BLESS=1 cargo test --test python_schema"
    );
}
