//! ModelFile → Model (to be written).
use super::{Model, ModelErrors};
use std::path::Path;
pub fn load(_path: &Path) -> Result<Model, ModelErrors> { todo!() }
pub fn load_str(_text: &str, _file_name: &str, _base_dir: Option<&Path>) -> Result<Model, ModelErrors> { todo!() }
