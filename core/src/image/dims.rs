//! Model dimensions and the buffer sizes that follow from them.

use super::format::{Role, TENSORS_PER_BLOCK, VOCAB};

/// The dimensions of a model, as the image header declares them.
///
/// Every buffer size the engine needs is a function of these, so firmware can size static
/// buffers for a model before it is flashed.
///
/// ```
/// use inkling_core::Dims;
/// let dims = Dims { d_model: 96, d_inner: 128, d_state: 8, d_conv: 4, dt_rank: 6,
///                   blocks: 3, tied_head: true, norm_eps: 1e-5, group: 0 };
/// // conv window (K-1) and SSM state (N) per channel, per block, in f32
/// assert_eq!(dims.state_len(), 3 * 128 * (3 + 8));
/// assert_eq!(dims.state_bytes(), 4 * dims.state_len());
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Dims {
    /// Width of the residual stream (D).
    pub d_model: usize,
    /// Width inside a block (I).
    pub d_inner: usize,
    /// State size per channel (N).
    pub d_state: usize,
    /// Convolution width (K).
    pub d_conv: usize,
    /// Rank of the step projection (R).
    pub dt_rank: usize,
    /// Number of blocks (L).
    pub blocks: usize,
    /// Whether the output head is `byte_embed` itself.
    pub tied_head: bool,
    /// The epsilon of every RMS norm.
    pub norm_eps: f32,
    /// Columns per int8 scale (0: one scale per row).
    pub group: usize,
}

impl Dims {
    /// f32 elements of one engine state: per block, the convolution window
    /// `[I, K-1]` and the SSM state `[I, N]`. It never grows with the text.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.state_len(), 1 * 16 * (4 - 1 + 4)); // blocks · I · (K-1 + N)
    /// ```
    pub const fn state_len(&self) -> usize {
        self.blocks * self.d_inner * (self.d_conv - 1 + self.d_state)
    }

    /// f32 elements of one block's state (`I · (K-1 + N)`): the work space a state kept in
    /// 16-bit floats is widened into while a step runs.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.block_state_len() * D.blocks, D.state_len());
    /// ```
    pub const fn block_state_len(&self) -> usize {
        self.d_inner * (self.d_conv - 1 + self.d_state)
    }

    /// Bytes of one engine state.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.state_bytes(), D.state_len() * core::mem::size_of::<f32>());
    /// assert_eq!(D.state_bytes(), 448);
    /// ```
    pub const fn state_bytes(&self) -> usize {
        4 * self.state_len()
    }

    /// f32 elements of the scratch the engine needs for one step (shared by all states): the
    /// logits `[256]`, residual and normalised residual `[D]` each, `[x; z]` `[2I]`,
    /// `[r; B; C]` `[R + 2N]`, step sizes and block input/output `[I]` each.
    ///
    /// ```
    /// use inkling_core::{Scratch, image::example::TINY_DIMS as D};
    /// assert_eq!(D.work_len(), 256 + 2 * 8 + 2 * 16 + 2 + 2 * 4 + 2 * 16);
    /// let (mut work, mut act) = (vec![0.0f32; D.work_len()], vec![0i16; D.act_len()]);
    /// assert!(Scratch::new(&D, &mut work[1..], &mut act).is_err());
    /// assert!(Scratch::new(&D, &mut work, &mut act).is_ok());
    /// ```
    pub const fn work_len(&self) -> usize {
        2 * self.d_model
            + 2 * self.d_inner
            + self.dt_rank
            + 2 * self.d_state
            + 2 * self.d_inner
            + VOCAB
    }

    /// f32 elements of scratch for prefilling `chunk` bytes in one pass: the logits once and
    /// everything else of [`Dims::work_len`] once per byte.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.chunk_work_len(1), D.work_len());
    /// assert_eq!(D.chunk_work_len(8), 256 + 8 * (D.work_len() - 256));
    /// ```
    pub const fn chunk_work_len(&self, chunk: usize) -> usize {
        VOCAB + chunk * (self.work_len() - VOCAB)
    }

    /// i16 elements of activation scratch for prefilling `chunk` bytes in one pass.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.chunk_act_len(1), D.act_len());
    /// assert_eq!(D.chunk_act_len(8), 8 * 16);
    /// ```
    pub const fn chunk_act_len(&self, chunk: usize) -> usize {
        chunk * self.act_len()
    }

    /// i16 elements of the quantised-activation scratch: the widest matrix input.
    ///
    /// ```
    /// use inkling_core::{Dims, image::example::TINY_DIMS as D};
    /// assert_eq!(D.act_len(), D.d_inner); // I 16 is wider than D 8
    /// assert_eq!(Dims { d_model: 32, ..D }.act_len(), 32);
    /// ```
    pub const fn act_len(&self) -> usize {
        if self.d_model > self.d_inner {
            self.d_model
        } else {
            self.d_inner
        }
    }

    /// Bytes of scratch (work and activations together).
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// assert_eq!(D.scratch_bytes(), 4 * D.work_len() + 2 * D.act_len());
    /// assert_eq!(D.scratch_bytes(), 1416);
    /// ```
    pub const fn scratch_bytes(&self) -> usize {
        4 * self.work_len() + 2 * self.act_len()
    }

    /// Number of tensors in an image of these dimensions.
    ///
    /// ```
    /// use inkling_core::{Dims, image::example::TINY_DIMS as D};
    /// assert_eq!(D.tensor_count(), 1 + 10 + 1); // byte_embed, one block, final_norm
    /// assert_eq!(Dims { tied_head: false, ..D }.tensor_count(), 13); // and head
    /// ```
    pub const fn tensor_count(&self) -> usize {
        1 + TENSORS_PER_BLOCK * self.blocks + 1 + if self.tied_head { 0 } else { 1 }
    }

    /// Index in the tensor table of a block tensor.
    pub(crate) const fn block_index(block: usize, slot: usize) -> usize {
        1 + block * TENSORS_PER_BLOCK + slot
    }

    /// `(rows, cols)` of the tensor with this role.
    ///
    /// ```
    /// use inkling_core::{Dims, image::format::Role};
    /// # let dims = Dims { d_model: 96, d_inner: 128, d_state: 8, d_conv: 4, dt_rank: 6,
    /// #                   blocks: 3, tied_head: true, norm_eps: 1e-5, group: 0 };
    /// assert_eq!(dims.shape(Role::Select), (6 + 2 * 8, 128));
    /// ```
    pub const fn shape(&self, role: Role) -> (usize, usize) {
        let (d, i, n, k, r) = (
            self.d_model,
            self.d_inner,
            self.d_state,
            self.d_conv,
            self.dt_rank,
        );
        match role {
            Role::ByteEmbed | Role::Head => (VOCAB, d),
            Role::FinalNorm | Role::Norm => (d, 1),
            Role::Expand => (2 * i, d),
            Role::Conv => (i, k),
            Role::ConvBias | Role::StepBias | Role::Skip => (i, 1),
            Role::Select => (r + 2 * n, i),
            Role::Step => (i, r),
            Role::Decay => (i, n),
            Role::Contract => (d, i),
        }
    }

    /// Scales per row of an int8 matrix with `cols` columns.
    ///
    /// ```
    /// use inkling_core::{Dims, image::example::TINY_DIMS as D};
    /// assert_eq!(D.scales_per_row(16), 1); // group 0: one scale per row
    /// assert_eq!(Dims { group: 6, ..D }.scales_per_row(16), 3); // ceil(16 / 6)
    /// ```
    pub const fn scales_per_row(&self, cols: usize) -> usize {
        if self.group == 0 {
            1
        } else {
            cols.div_ceil(self.group)
        }
    }

    /// Multiply-accumulates of int8 weights in one step (all matrix-vector products).
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// // expand, select and contract of the one block, then the head
    /// assert_eq!(D.macs_per_step(), 2 * 16 * 8 + (2 + 2 * 4) * 16 + 8 * 16 + 256 * 8);
    /// ```
    pub const fn macs_per_step(&self) -> usize {
        let per_block = 2 * self.d_inner * self.d_model
            + (self.dt_rank + 2 * self.d_state) * self.d_inner
            + self.d_model * self.d_inner;
        self.blocks * per_block + VOCAB * self.d_model
    }
}
