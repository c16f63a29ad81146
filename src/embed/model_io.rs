//! The saved diffusion model's file format lives in [`crate::io::model`] (files are touched only
//! by `io`); these names stay here so existing callers compile.

pub use crate::io::model::{add_model_group, load_model, save_model, MODEL_FORMAT, MODEL_PATH};
