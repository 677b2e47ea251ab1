//! Typed attribute columns with validity masks.
//!
//! A column holds one value per case (case attributes) or per event (event attributes). Nulls are
//! a validity mask beside the values (`true` = present); the value under a null is unspecified
//! (zero or code 0) and never read.

use std::sync::Arc;

use rayon::prelude::*;

/// The values of a column, by type.
#[derive(Debug, Clone, PartialEq)]
pub enum Values {
    /// 64-bit floats.
    F64(Vec<f64>),
    /// 64-bit integers.
    I64(Vec<i64>),
    /// Booleans.
    Bool(Vec<bool>),
    /// Categorical / string values: codes into a shared dictionary.
    Cat {
        /// One code per row, an index into `dict`.
        codes: Vec<u32>,
        /// The distinct values.
        dict: Arc<Vec<String>>,
    },
    /// Timestamps as nanoseconds since the Unix epoch, UTC.
    Time(Vec<i64>),
}

/// A named, typed column with an optional validity mask.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// The column name.
    pub name: String,
    /// The values.
    pub values: Values,
    /// `Some(mask)` when the column has nulls: `mask[i]` is false where row `i` is null.
    pub valid: Option<Vec<bool>>,
}

/// The type tag of a column, as a short string used across the boundary.
pub fn type_name(v: &Values) -> &'static str {
    match v {
        Values::F64(_) => "float",
        Values::I64(_) => "int",
        Values::Bool(_) => "bool",
        Values::Cat { .. } => "str",
        Values::Time(_) => "time",
    }
}

fn gather_vec<T: Copy + Send + Sync>(v: &[T], idx: &[usize]) -> Vec<T> {
    idx.par_iter().with_min_len(4096).map(|&i| v[i]).collect()
}

impl Values {
    /// Number of rows.
    pub fn len(&self) -> usize {
        match self {
            Values::F64(v) => v.len(),
            Values::I64(v) | Values::Time(v) => v.len(),
            Values::Bool(v) => v.len(),
            Values::Cat { codes, .. } => codes.len(),
        }
    }
    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// The rows at `idx`, in that order.
    pub fn gather(&self, idx: &[usize]) -> Values {
        match self {
            Values::F64(v) => Values::F64(gather_vec(v, idx)),
            Values::I64(v) => Values::I64(gather_vec(v, idx)),
            Values::Time(v) => Values::Time(gather_vec(v, idx)),
            Values::Bool(v) => Values::Bool(gather_vec(v, idx)),
            Values::Cat { codes, dict } => Values::Cat {
                codes: gather_vec(codes, idx),
                dict: Arc::clone(dict),
            },
        }
    }
    /// A value rendered as text (used by the XES writer and messages).
    pub fn text(&self, i: usize) -> String {
        match self {
            Values::F64(v) => format!("{}", v[i]),
            Values::I64(v) | Values::Time(v) => v[i].to_string(),
            Values::Bool(v) => v[i].to_string(),
            Values::Cat { codes, dict } => dict[codes[i] as usize].clone(),
        }
    }
}

impl Column {
    /// A column without nulls.
    pub fn new(name: impl Into<String>, values: Values) -> Self {
        Column {
            name: name.into(),
            values,
            valid: None,
        }
    }
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.values.len()
    }
    /// Whether there are no rows.
    pub fn is_empty(&self) -> bool {
        self.values.is_empty()
    }
    /// Whether row `i` holds a value.
    pub fn is_valid(&self, i: usize) -> bool {
        self.valid.as_ref().is_none_or(|m| m[i])
    }
    /// Number of null rows.
    pub fn null_count(&self) -> usize {
        self.valid
            .as_ref()
            .map_or(0, |m| m.iter().filter(|&&b| !b).count())
    }
    /// The rows at `idx`, in that order.
    pub fn gather(&self, idx: &[usize]) -> Column {
        Column {
            name: self.name.clone(),
            values: self.values.gather(idx),
            valid: self.valid.as_ref().map(|m| gather_vec(m, idx)),
        }
    }
    /// Drop the mask when it has no nulls.
    pub fn normalised(mut self) -> Self {
        if self.valid.as_ref().is_some_and(|m| m.iter().all(|&b| b)) {
            self.valid = None;
        }
        self
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gather_keeps_mask_and_dict() {
        let c = Column {
            name: "x".into(),
            values: Values::Cat {
                codes: vec![0, 1, 0],
                dict: Arc::new(vec!["a".into(), "b".into()]),
            },
            valid: Some(vec![true, false, true]),
        };
        let g = c.gather(&[2, 1]);
        assert_eq!(g.valid, Some(vec![true, false]));
        assert_eq!(g.values.text(0), "a");
        assert_eq!(c.null_count(), 1);
        assert!(!g.is_valid(1));
    }
}
