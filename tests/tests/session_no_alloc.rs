//! Typing 1 MB of text through a typing session allocates nothing and changes no buffer:
//! the session lives in the fixed buffers it was given.

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};

use inkling_core::image::example::tiny_image;
use inkling_core::session::{SearchOptions, Session};
use inkling_core::{Model, Scratch};

/// Counts every allocation of this test process.
struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
        // SAFETY: forwards the caller's layout to the system allocator unchanged.
        unsafe { System.alloc(layout) }
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: `ptr` came from `alloc` above with this layout.
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

#[test]
fn a_megabyte_of_typing_allocates_nothing() {
    let image = tiny_image();
    let model = Model::from_bytes(&image).unwrap();
    let d = *model.dims();
    let mut floats = vec![0.0f32; d.session_floats(3)];
    let mut work = vec![0.0f32; d.work_len()];
    let mut act = vec![0i16; d.act_len()];
    let sizes = (floats.len(), work.len(), act.len());
    // A megabyte of varied text: words, punctuation, digits and bytes that are not UTF-8.
    let text: Vec<u8> = b"Stores for Upper Tarn hut: 12 tins, rope 40m; ok? \xff\xfe caf\xc3\xa9 "
        .iter()
        .copied()
        .cycle()
        .take(1 << 20)
        .collect();
    let options = SearchOptions::new(3);
    {
        let scratch = Scratch::new(&d, &mut work, &mut act).unwrap();
        let mut session = Session::<_, 3>::new(model, &mut floats, scratch).unwrap();
        let before = ALLOCATIONS.load(Ordering::Relaxed);
        for (i, &b) in text.iter().enumerate() {
            // A full word buffer refuses further word bytes; that is an answer, not a failure.
            let _ = session.push(b);
            if i % 4096 == 0 {
                let found = session.suggest(&options).unwrap();
                assert!(found.list.len() <= 3);
                session.backspace().unwrap();
            }
        }
        assert_eq!(
            ALLOCATIONS.load(Ordering::Relaxed),
            before,
            "the session allocated"
        );
    }
    assert_eq!((floats.len(), work.len(), act.len()), sizes);
    assert!(
        floats.iter().all(|v| v.is_finite()),
        "state or logits went non-finite"
    );
}
