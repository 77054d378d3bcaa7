//! Small helpers over the `hdf5` crate: columns with a `units` attribute, string attributes.

use std::str::FromStr;

use hdf5::types::VarLenUnicode;
use hdf5::{Group, H5Type, Location};

pub type H5Result<T> = hdf5::Result<T>;

/// Write a 1-D column with `units` and `description` attributes.
pub fn write_column<T: H5Type>(
    group: &Group,
    name: &str,
    data: &[T],
    units: &str,
    description: &str,
) -> H5Result<()> {
    let ds = group.new_dataset_builder().with_data(data).create(name)?;
    set_str_attr(&ds, "units", units)?;
    set_str_attr(&ds, "description", description)?;
    Ok(())
}

/// Set a UTF-8 string attribute on a group, dataset or file.
pub fn set_str_attr(loc: &Location, name: &str, value: &str) -> H5Result<()> {
    let v = VarLenUnicode::from_str(value).map_err(|e| hdf5::Error::from(e.to_string()))?;
    loc.new_attr::<VarLenUnicode>()
        .shape(())
        .create(name)?
        .write_scalar(&v)?;
    Ok(())
}

/// Set a numeric scalar attribute.
pub fn set_num_attr<T: H5Type>(loc: &Location, name: &str, value: T) -> H5Result<()> {
    loc.new_attr::<T>()
        .shape(())
        .create(name)?
        .write_scalar(&value)?;
    Ok(())
}

/// Read a string attribute.
pub fn get_str_attr(loc: &Location, name: &str) -> H5Result<String> {
    let v: VarLenUnicode = loc.attr(name)?.read_scalar()?;
    Ok(v.as_str().to_string())
}

/// Convert node links (u32, NONE = u32::MAX) to signed indices with -1 for none, which is
/// what array users expect.
pub fn links_to_i64(v: &[u32]) -> Vec<i64> {
    v.iter()
        .map(|&x| if x == u32::MAX { -1 } else { x as i64 })
        .collect()
}
