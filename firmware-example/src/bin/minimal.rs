//! The program to copy: a model image and its word lists (a deny list, a lexicon if one is
//! given) in flash, a session's buffers in a static, typed bytes in, the three likeliest
//! words out (one line per keystroke, tab-separated), on any of the three cores. `cargo run
//! --release --bin minimal` runs it under QEMU; on a board, replace the host streams with a
//! UART (any `embedded_io::Read` and `Write`).
#![no_std]
#![no_main]

use embedded_io::{Read, Write};
use inkling_core::session::{SearchOptions, StaticSessionBuffers, DEFAULT_HISTORY};
use inkling_core::Model;
use inkling_firmware_example::device::entry;
use inkling_firmware_example::device::exit::{exit, ExitCode};
use inkling_firmware_example::device::semihosting_io::{HostInput, HostOutput};

// SUGGESTIONS, SESSION_FLOATS, WORK_LEN and ACT_LEN, from the image's dimensions (build.rs).
include!(concat!(env!("OUT_DIR"), "/session_sizes.rs"));
// WORD_LISTS: the deny list and the lexicon, in flash as they are (build.rs checks them).
include!(concat!(env!("OUT_DIR"), "/word_lists.rs"));

/// The image's payloads are read in place from flash and want 16-byte alignment.
#[repr(C, align(16))]
struct Aligned<T: ?Sized>(T);
static IMAGE: &Aligned<[u8]> = &Aligned(*include_bytes!(env!("INKLING_IMAGE_FILE")));

/// All the session's RAM, counted by the linker; handed out once, without `unsafe`.
static BUFFERS: StaticSessionBuffers<SESSION_FLOATS, WORK_LEN, ACT_LEN> =
    StaticSessionBuffers::new();

#[entry]
fn main() -> ! {
    let (Ok(mut keys), Ok(mut out)) = (HostInput::open(), HostOutput::stdout()) else {
        exit(ExitCode::Io)
    };
    let (Ok(model), Ok(filter)) = (Model::from_bytes(&IMAGE.0), WORD_LISTS.filter()) else {
        exit(ExitCode::BadImage)
    };
    let Ok(mut session) = BUFFERS.session::<_, SUGGESTIONS, DEFAULT_HISTORY>(model) else {
        exit(ExitCode::Internal)
    };
    let options = SearchOptions {
        filter,
        ..SearchOptions::new(SUGGESTIONS)
    };
    let mut key = [0u8; 1];
    while let Ok(1) = keys.read(&mut key) {
        let edited = match key[0] {
            b'\n' => session.clear(),
            0x08 | 0x7f => session.backspace().map(|_| ()),
            byte => session.push(byte),
        };
        if edited.is_err() || key[0] == b'\n' {
            continue; // a word at its longest refuses the byte; a new line starts afresh
        }
        let Ok(found) = session.suggest(&options) else {
            exit(ExitCode::Internal)
        };
        for s in &found.list {
            let _ = out
                .write_all(s.text.as_slice())
                .and_then(|()| out.write_all(b"\t"));
        }
        let _ = out.write_all(b"\n");
    }
    exit(ExitCode::Success)
}
