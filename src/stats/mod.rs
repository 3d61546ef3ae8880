//! Pure numerical functions. No manifest, policy or report types live here.
