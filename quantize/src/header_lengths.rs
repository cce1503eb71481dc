//! A safetensors header's promise about each tensor's length, checked tensor by tensor so
//! that a header that lies is refused with the tensor's name.
//!
//! The header (safetensors format: an 8-byte little-endian length, then that many bytes of
//! JSON) gives each tensor a `dtype`, a `shape` and `data_offsets` `[begin, end]`; the bytes
//! between the offsets must be exactly the shape's element count times the element size.

use std::collections::BTreeMap;

/// One tensor whose offsets disagree with its shape and type.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LengthMismatch {
    /// The tensor's name in the file.
    pub name: String,
    /// Bytes its shape and element type need.
    pub needed: u64,
    /// Bytes its data offsets give.
    pub given: u64,
}

/// The header's entry for one tensor (the fields this check reads).
#[derive(serde::Deserialize)]
struct Entry {
    dtype: String,
    shape: Vec<u64>,
    data_offsets: [u64; 2],
}

/// Bytes per element of a safetensors `dtype` name (those of the safetensors format; an
/// unknown name gives `None` and is left to the container's own check).
fn element_bytes(dtype: &str) -> Option<u64> {
    Some(match dtype {
        "BOOL" | "U8" | "I8" | "F8_E4M3" | "F8_E5M2" => 1,
        "U16" | "I16" | "F16" | "BF16" => 2,
        "U32" | "I32" | "F32" => 4,
        "U64" | "I64" | "F64" => 8,
        _ => return None,
    })
}

/// The first tensor (in name order) whose data offsets give another length than its shape
/// and type need; `None` if the header cannot be read this far or every length agrees.
pub fn first_mismatch(bytes: &[u8]) -> Option<LengthMismatch> {
    let len = u64::from_le_bytes(bytes.get(..8)?.try_into().ok()?);
    let header = bytes.get(8..8usize.checked_add(usize::try_from(len).ok()?)?)?;
    let entries: BTreeMap<String, serde_json::Value> = serde_json::from_slice(header).ok()?;
    entries
        .into_iter()
        .filter(|(name, _)| name != "__metadata__")
        .find_map(|(name, value)| {
            let entry: Entry = serde_json::from_value(value).ok()?;
            let elements = entry
                .shape
                .iter()
                .try_fold(1u64, |n, &d| n.checked_mul(d))?;
            let needed = elements.checked_mul(element_bytes(&entry.dtype)?)?;
            let [begin, end] = entry.data_offsets;
            let given = end.checked_sub(begin)?;
            (needed != given).then_some(LengthMismatch {
                name,
                needed,
                given,
            })
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A safetensors file (8-byte little-endian header length, JSON header, data), as the
    /// format's specification lays it out.
    fn file(header: &str, data: usize) -> Vec<u8> {
        let mut out = (header.len() as u64).to_le_bytes().to_vec();
        out.extend_from_slice(header.as_bytes());
        out.resize(out.len() + data, 0);
        out
    }

    #[test]
    fn names_the_tensor_whose_offsets_disagree_with_its_shape() {
        let honest = r#"{"a":{"dtype":"F32","shape":[2,3],"data_offsets":[0,24]},
                        "b":{"dtype":"F16","shape":[4],"data_offsets":[24,32]}}"#;
        assert_eq!(first_mismatch(&file(honest, 32)), None);
        let lying = r#"{"a":{"dtype":"F32","shape":[2,3],"data_offsets":[0,24]},
                       "b":{"dtype":"F16","shape":[4],"data_offsets":[24,30]}}"#;
        assert_eq!(
            first_mismatch(&file(lying, 30)),
            Some(LengthMismatch {
                name: "b".into(),
                needed: 8,
                given: 6
            })
        );
        assert_eq!(first_mismatch(b"short"), None);
    }
}
