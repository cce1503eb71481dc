//! What the core's integration tests share: a session over the tiny example model.

use inkling_core::image::example::tiny_image;
use inkling_core::session::{Session, SessionBuffers, DEFAULT_HISTORY};
use inkling_core::Model;

/// Beams of the sessions these tests make.
pub const K: usize = 4;

/// Types `text` into a fresh session over the tiny example model and hands it to `f`.
pub fn with_session<R>(text: &[u8], f: impl FnOnce(&mut Session<'_, Model<'_>, K>) -> R) -> R {
    let image = tiny_image();
    let model = Model::from_bytes(&image).unwrap();
    let dims = *model.dims();
    let mut buffers = SessionBuffers::from_parts(
        vec![0.0f32; dims.session_floats(K)],
        vec![0.0f32; dims.work_len()],
        vec![0i16; dims.act_len()],
    );
    let mut session = buffers.session::<_, K, DEFAULT_HISTORY>(model).unwrap();
    session.push_bytes(text).unwrap();
    f(&mut session)
}
