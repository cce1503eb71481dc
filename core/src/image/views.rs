//! Borrowed, already-validated views of tensor payloads.
//!
//! A view never fails: it is built only from ranges the reader has checked, and a read past
//! its end yields nothing rather than panicking.

use half::f16;

/// A vector or small matrix of floats, stored little-endian in the image or native in memory.
///
/// ```
/// use inkling_core::image::views::Floats;
/// let native = [1.0f32, -2.5];
/// let v = Floats::Native(&native);
/// assert_eq!(v.len(), 2);
/// assert_eq!(v.get(1), -2.5);
/// let sum: f32 = v.iter().sum();
/// assert_eq!(sum, -1.5);
/// ```
#[derive(Debug, Clone, Copy)]
pub enum Floats<'a> {
    /// IEEE 754 binary32, little-endian bytes.
    F32Le(&'a [u8]),
    /// IEEE 754 binary16, little-endian bytes.
    F16Le(&'a [u8]),
    /// Native f32 values (the float engine on the workstation).
    Native(&'a [f32]),
}

impl<'a> Floats<'a> {
    /// Number of values.
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// assert_eq!(Floats::F32Le(&[0; 8]).len(), 2);
    /// assert_eq!(Floats::F16Le(&[0; 8]).len(), 4);
    /// ```
    pub fn len(&self) -> usize {
        match self {
            Floats::F32Le(b) => b.len() / 4,
            Floats::F16Le(b) => b.len() / 2,
            Floats::Native(v) => v.len(),
        }
    }

    /// Whether there are no values.
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// assert!(Floats::Native(&[]).is_empty());
    /// assert!(!Floats::F32Le(&1.0f32.to_le_bytes()).is_empty());
    /// ```
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Value `i`, or 0.0 past the end.
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// let v = Floats::F16Le(&[0x00, 0x3C, 0x00, 0xC0]); // binary16 1.0 and -2.0
    /// assert_eq!((v.get(0), v.get(1)), (1.0, -2.0));
    /// assert_eq!(v.get(2), 0.0); // past the end
    /// ```
    pub fn get(&self, i: usize) -> f32 {
        match self {
            Floats::F32Le(b) => b
                .as_chunks::<4>()
                .0
                .get(i)
                .map_or(0.0, |&s| f32::from_le_bytes(s)),
            Floats::F16Le(b) => b
                .as_chunks::<2>()
                .0
                .get(i)
                .map_or(0.0, |&s| f16::from_le_bytes(s).to_f32()),
            Floats::Native(v) => v.get(i).copied().unwrap_or(0.0),
        }
    }

    /// The values as plain f32 in memory, when they are: native values, or binary32 bytes
    /// that are 4-byte aligned on a little-endian target (an image's payloads are 16-byte
    /// aligned in the image, so this holds wherever the image itself sits 4-byte aligned).
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// assert_eq!(Floats::Native(&[1.5]).as_f32s(), Some(&[1.5f32][..]));
    /// assert_eq!(Floats::F16Le(&[0, 0x3C]).as_f32s(), None);
    /// ```
    pub fn as_f32s(&self) -> Option<&'a [f32]> {
        match *self {
            Floats::Native(v) => Some(v),
            #[cfg(target_endian = "little")]
            Floats::F32Le(b) => bytemuck::try_cast_slice(b).ok(),
            _ => None,
        }
    }

    /// Values `start..start + len` as a view (empty where out of range).
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// let v = Floats::Native(&[1.0, 2.0, 3.0]);
    /// assert_eq!(v.slice(1, 2).get(0), 2.0);
    /// assert!(v.slice(2, 5).is_empty());
    /// ```
    pub fn slice(&self, start: usize, len: usize) -> Floats<'a> {
        match *self {
            Floats::F32Le(b) => Floats::F32Le(b.get(4 * start..4 * (start + len)).unwrap_or(&[])),
            Floats::F16Le(b) => Floats::F16Le(b.get(2 * start..2 * (start + len)).unwrap_or(&[])),
            Floats::Native(v) => Floats::Native(v.get(start..start + len).unwrap_or(&[])),
        }
    }

    /// The values in order.
    ///
    /// ```
    /// use inkling_core::image::views::Floats;
    /// let bytes = [0x00, 0x3C, 0x00, 0xC0]; // binary16 1.0 and -2.0
    /// let values: Vec<f32> = Floats::F16Le(&bytes).iter().collect();
    /// assert_eq!(values, [1.0, -2.0]);
    /// ```
    pub fn iter(&self) -> FloatIter<'a> {
        match *self {
            Floats::F32Le(b) => FloatIter::F32(b.as_chunks::<4>().0.iter()),
            Floats::F16Le(b) => FloatIter::F16(b.as_chunks::<2>().0.iter()),
            Floats::Native(v) => FloatIter::Native(v.iter()),
        }
    }
}

/// Iterator over [`Floats`].
///
/// ```
/// use inkling_core::image::views::{FloatIter, Floats};
/// let mut it: FloatIter<'_> = Floats::Native(&[0.5]).iter();
/// assert_eq!((it.next(), it.next()), (Some(0.5), None));
/// ```
#[derive(Debug, Clone)]
pub enum FloatIter<'a> {
    /// Over binary32 bytes.
    F32(core::slice::Iter<'a, [u8; 4]>),
    /// Over binary16 bytes.
    F16(core::slice::Iter<'a, [u8; 2]>),
    /// Over native values.
    Native(core::slice::Iter<'a, f32>),
}

impl Iterator for FloatIter<'_> {
    type Item = f32;

    #[inline]
    fn next(&mut self) -> Option<f32> {
        match self {
            FloatIter::F32(c) => c.next().map(|&s| f32::from_le_bytes(s)),
            FloatIter::F16(c) => c.next().map(|&s| f16::from_le_bytes(s).to_f32()),
            FloatIter::Native(v) => v.next().copied(),
        }
    }
}

/// An int8 matrix, row-major, with one scale per row or per group of columns.
///
/// ```
/// use inkling_core::image::views::{Floats, QuantMatrix};
/// let w = [1u8, 2, 0xFF, 4]; // int8 1, 2, -1, 4 as stored bytes
/// let s = [0.5f32, 0.25];
/// let m = QuantMatrix::new(&w, Floats::Native(&s), 2, 2, 0);
/// assert_eq!(m.weight(1, 0), -0.25);
/// ```
#[derive(Debug, Clone, Copy)]
pub struct QuantMatrix<'a> {
    weights: &'a [u8],
    scales: Floats<'a>,
    rows: usize,
    cols: usize,
    group: usize,
}

impl<'a> QuantMatrix<'a> {
    /// A view over `rows × cols` int8 weights (as bytes) and their scales. `group` is the
    /// number of columns per scale, 0 for one scale per row.
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// // one row of four columns, a scale per two columns
    /// let m = QuantMatrix::new(&[2, 2, 2, 2], Floats::Native(&[0.5, 4.0]), 1, 4, 2);
    /// assert_eq!((m.weight(0, 1), m.weight(0, 2)), (1.0, 8.0));
    /// ```
    pub fn new(
        weights: &'a [u8],
        scales: Floats<'a>,
        rows: usize,
        cols: usize,
        group: usize,
    ) -> Self {
        QuantMatrix {
            weights,
            scales,
            rows,
            cols,
            group,
        }
    }

    /// Rows.
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let m = QuantMatrix::new(&[0; 6], Floats::Native(&[1.0; 2]), 2, 3, 0);
    /// assert_eq!(m.rows(), 2);
    /// ```
    pub fn rows(&self) -> usize {
        self.rows
    }

    /// Columns.
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let m = QuantMatrix::new(&[0; 6], Floats::Native(&[1.0; 2]), 2, 3, 0);
    /// assert_eq!(m.cols(), 3);
    /// ```
    pub fn cols(&self) -> usize {
        self.cols
    }

    /// Columns per scale (0: one per row).
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let m = QuantMatrix::new(&[0; 8], Floats::Native(&[1.0; 4]), 2, 4, 2);
    /// assert_eq!(m.group(), 2);
    /// ```
    pub fn group(&self) -> usize {
        self.group
    }

    /// The int8 weights of row `r` as stored bytes (empty past the end).
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let m = QuantMatrix::new(&[1, 2, 3, 4], Floats::Native(&[1.0; 2]), 2, 2, 0);
    /// assert_eq!(m.row(1), &[3, 4]);
    /// assert!(m.row(2).is_empty());
    /// ```
    #[inline]
    pub fn row(&self, r: usize) -> &'a [u8] {
        self.weights
            .get(r * self.cols..(r + 1) * self.cols)
            .unwrap_or(&[])
    }

    /// All scales, row-major (`ceil(cols / group)` per row, one per row for group 0).
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// let embed = model.byte_embed();
    /// assert_eq!(embed.scales().len(), 256); // group 0: one per row
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn scales(&self) -> Floats<'a> {
        self.scales
    }

    /// All weights as stored bytes, row-major.
    ///
    /// ```
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = inkling_core::Model::from_bytes(&image)?;
    /// let embed = model.byte_embed();
    /// assert_eq!(embed.weights().len(), embed.rows() * embed.cols());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn weights(&self) -> &'a [u8] {
        self.weights
    }

    /// The scales of row `r`.
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let scales = [1.0, 2.0, 3.0, 4.0];
    /// let m = QuantMatrix::new(&[0; 8], Floats::Native(&scales), 2, 4, 2);
    /// assert_eq!(m.row_scales(1).iter().collect::<Vec<_>>(), [3.0, 4.0]);
    /// ```
    #[inline]
    pub fn row_scales(&self, r: usize) -> Floats<'a> {
        let per_row = if self.group == 0 {
            1
        } else {
            self.cols.div_ceil(self.group)
        };
        self.scales.slice(r * per_row, per_row)
    }

    /// The dequantised weight at `(r, c)`, 0.0 outside the matrix.
    ///
    /// ```
    /// use inkling_core::image::views::{Floats, QuantMatrix};
    /// let m = QuantMatrix::new(&[0x80, 0x7F], Floats::Native(&[0.5]), 1, 2, 0); // int8 -128, 127
    /// assert_eq!((m.weight(0, 0), m.weight(0, 1)), (-64.0, 63.5));
    /// assert_eq!(m.weight(1, 0), 0.0); // outside
    /// ```
    pub fn weight(&self, r: usize, c: usize) -> f32 {
        let w = self.row(r).get(c).map_or(0, |&b| b as i8);
        let s = self
            .row_scales(r)
            .get(c.checked_div(self.group).unwrap_or(0));
        w as f32 * s
    }
}

/// Read access to the values of a float tensor, in order or row after row: implemented by
/// plain `&[f32]` and by [`Floats`], so a hot loop is written once and compiled for both (the
/// slice version is the one that vectorises). Hot loops walk the rows with an iterator
/// rather than looking each row up by index, which would check its range every time.
///
/// ```
/// use inkling_core::image::views::{FloatRun, Floats};
/// fn total(v: impl FloatRun) -> f32 { v.values().sum() }
/// let x = [1.0f32, 2.0, 3.0];
/// assert_eq!(total(&x[..]), total(Floats::Native(&x)));
/// ```
pub trait FloatRun: Copy {
    /// Every value, in order.
    ///
    /// ```
    /// use inkling_core::image::views::FloatRun;
    /// let x = [1.0f32, 2.0];
    /// assert_eq!((&x[..]).values().collect::<Vec<_>>(), [1.0, 2.0]);
    /// ```
    fn values(self) -> impl Iterator<Item = f32>;

    /// The values as consecutive rows of `width` (a matrix stored row after row); a last
    /// partial row is left out. A width of 0 gives no rows.
    ///
    /// ```
    /// use inkling_core::image::views::{FloatRun, Floats};
    /// let x = [1.0f32, 2.0, 3.0, 4.0, 5.0];
    /// let sums: Vec<f32> = (&x[..]).rows(2).map(|row| row.sum()).collect();
    /// assert_eq!(sums, [3.0, 7.0]);
    /// assert_eq!(Floats::Native(&x).rows(2).count(), 2);
    /// assert_eq!((&x[..]).rows(0).count(), 0);
    /// ```
    fn rows(self, width: usize) -> impl Iterator<Item = impl Iterator<Item = f32>>;
}

impl FloatRun for &[f32] {
    #[inline]
    fn values(self) -> impl Iterator<Item = f32> {
        self.iter().copied()
    }

    #[inline]
    fn rows(self, width: usize) -> impl Iterator<Item = impl Iterator<Item = f32>> {
        // No rows at all for width 0 (`chunks_exact` needs a width of at least 1).
        let usable = if width == 0 { &[][..] } else { self };
        usable
            .chunks_exact(width.max(1))
            .map(|row| row.iter().copied())
    }
}

impl FloatRun for Floats<'_> {
    #[inline]
    fn values(self) -> impl Iterator<Item = f32> {
        self.iter()
    }

    #[inline]
    fn rows(self, width: usize) -> impl Iterator<Item = impl Iterator<Item = f32>> {
        let count = self.len().checked_div(width).unwrap_or(0);
        (0..count).map(move |i| self.slice(i * width, width).iter())
    }
}
