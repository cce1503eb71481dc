//! [`Session`]: text typed byte by byte, with backspace, and completions of it.

use super::beam_search::{Root, Search, Shape};
use super::beam_slots::Slots;
use super::keypad::KeyMap;
use super::suggestion::{SearchOptions, Suggestions};
use super::text_history::{TextHistory, DEFAULT_HISTORY};
use super::word_boundary::{is_boundary, PRIME_BYTE};
use super::word_buffer::{WordBuffer, MAX_WORD_LEN};
use crate::engine::buffers::Scratch;
use crate::engine::weights::Weights;
use crate::error::Error;
use crate::image::format::VOCAB;
use crate::user_memory::MAX_PHRASE_LEN;

/// The slot of the live state, the state after all the text.
const LIVE: usize = 0;
/// The slot of the snapshot, the state after the last word boundary.
const SNAPSHOT: usize = 1;
/// The first of the `K` beam slots.
const FIRST_BEAM: usize = 2;
/// The most bytes typed after the snapshot before a boundary byte takes a new one: a
/// backspace then re-feeds at most this many bytes and a word.
const MAX_SINCE_SNAPSHOT: usize = 2 * MAX_WORD_LEN;

/// A typing session: the model's state over the text typed so far, the word being typed and
/// the last `H` bytes, with `K` beam states for completion searches.
///
/// - **Start.** A new session (and [`clear`](Session::clear)) feeds [`PRIME_BYTE`] (`\n`)
///   once, so the first word is predicted as the start of a line (the training text has one
///   message per line).
/// - **Words.** [`push`](Session::push) feeds one byte (one step). A [word
///   boundary](super::is_boundary) ends the current word; the state where the next word
///   starts is kept as a snapshot when its first byte comes (so until then the snapshot
///   stays where the word before the boundary started, unless more than
///   `2 · MAX_WORD_LEN` bytes follow it). A word holds at most [`MAX_WORD_LEN`] bytes; a
///   further word byte is refused (see there).
/// - **Backspace** restores the snapshot and re-feeds the bytes after it, one step each:
///   the rest of the current word, or, right after a boundary, the word before it and the
///   boundary bytes (so correcting the last word after its space costs as much as inside
///   it).
/// - **Backspace past the snapshot** (a boundary deleted after the word that followed it)
///   recovers from the history of the last `H` bytes: the state is reset, primed and the
///   history re-fed, at most `H + 1` steps. Text older than the history is forgotten: after
///   such a backspace the model sees only the last `H` bytes (a session shorter than `H`
///   bytes loses nothing, and gives exactly the state of typing the shorter text afresh).
/// - **Memory.** The caller gives one f32 buffer of
///   [`Dims::session_floats`](crate::Dims::session_floats)`(K)` elements (the logits after
///   the live state and after the snapshot, and `K + 2` states: the live state, the snapshot
///   and `K` beams, each kept in 16-bit floats, see
///   [`state_store`](crate::engine::state_store)) and a [`Scratch`];
///   the session itself holds the fixed word and history buffers. See
///   [`Dims::session_bytes`](crate::Dims::session_bytes). Nothing grows with the text.
///
/// `H` must be at least [`MAX_WORD_LEN`] (checked at compile time), so that the history
/// always holds the current word.
///
/// ```
/// use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let dims = *model.dims();
/// let mut floats = [0.0f32; 8192];
/// let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
/// let scratch = Scratch::new(&dims, &mut work, &mut act)?;
/// let mut session = Session::<_, 3>::new(model, &mut floats, scratch)?;
/// session.push_bytes(b"hello wo")?;
/// let found = session.suggest(&SearchOptions::new(3))?;
/// assert!(found.list.iter().all(|s| s.text.starts_with(b"wo")));
/// session.backspace()?;
/// assert_eq!(session.word(), b"w");
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug)]
pub struct Session<'b, W: Weights, const K: usize, const H: usize = DEFAULT_HISTORY> {
    weights: W,
    scratch: Scratch<'b>,
    /// The live state, the snapshot at the last word boundary and `K` beam states.
    states: Slots<'b>,
    /// The logits after the live state.
    live_logits: &'b mut [f32],
    /// The logits after the snapshot.
    snapshot_logits: &'b mut [f32],
    word: WordBuffer,
    history: TextHistory<H>,
    /// Bytes of the text after the snapshot (all of them in the history).
    since_snapshot: usize,
    /// The last completion search, kept so that [`refine`](Session::refine) can go on with it.
    search: Search<K>,
}

impl<'b, W: Weights, const K: usize, const H: usize> Session<'b, W, K, H> {
    const HISTORY_HOLDS_A_WORD: () = assert!(H >= MAX_WORD_LEN, "H must be >= MAX_WORD_LEN");

    /// A primed session over `weights`, with its states in `floats` (at least
    /// [`Dims::session_floats`](crate::Dims::session_floats)`(K)` elements; the rest is
    /// unused) and `scratch` made for the same model.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// assert!(session.word().is_empty() && session.history().is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn new(weights: W, floats: &'b mut [f32], scratch: Scratch<'b>) -> Result<Self, Error> {
        let () = Self::HISTORY_HOLDS_A_WORD;
        let dims = *weights.dims();
        let needed = dims.session_floats(K);
        if floats.len() < needed {
            return Err(Error::BufferTooSmall {
                buffer: "session",
                needed,
                actual: floats.len(),
            });
        }
        let (live_logits, rest) = floats.split_at_mut(VOCAB);
        let (snapshot_logits, rest) = rest.split_at_mut(VOCAB);
        let (states, _) = Slots::carve(rest, &dims, FIRST_BEAM + K)?;
        let mut session = Session {
            weights,
            scratch,
            states,
            live_logits,
            snapshot_logits,
            word: WordBuffer::new(),
            history: TextHistory::new(),
            since_snapshot: 0,
            search: Search::default(),
        };
        session.clear()?;
        Ok(session)
    }

    /// Forgets all text and primes the state again (one step).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// let fresh: Vec<f32> = session.logits().to_vec();
    /// session.push_bytes(b"some text")?;
    /// session.clear()?;
    /// assert_eq!(session.logits(), &fresh[..]);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn clear(&mut self) -> Result<(), Error> {
        self.search = Search::default();
        self.word.clear();
        self.history.clear();
        self.prime()?;
        self.snapshot();
        Ok(())
    }

    /// Feeds one byte (one step). A word byte when the word already has [`MAX_WORD_LEN`]
    /// bytes is refused with [`Error::CapacityExceeded`] and changes nothing.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, MAX_WORD_LEN}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// for _ in 0..MAX_WORD_LEN {
    ///     session.push(b'a')?;
    /// }
    /// assert!(session.push(b'a').is_err());
    /// session.push(b' ')?; // a boundary is always accepted
    /// assert!(session.word().is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn push(&mut self, byte: u8) -> Result<(), Error> {
        self.advance(byte)?;
        self.history.push(byte);
        Ok(())
    }

    /// [`push`](Session::push) without the history.
    fn advance(&mut self, byte: u8) -> Result<(), Error> {
        self.search = Search::default();
        if is_boundary(byte) {
            self.feed_live(&[byte])?;
            self.word.clear();
            self.since_snapshot += 1;
            if self.since_snapshot > MAX_SINCE_SNAPSHOT {
                self.snapshot();
            }
        } else {
            if self.word.is_full() {
                return Err(Error::CapacityExceeded {
                    buffer: "word",
                    capacity: MAX_WORD_LEN,
                });
            }
            if self.word.as_bytes().is_empty() && self.since_snapshot > 0 {
                // A word starts here.
                self.snapshot();
            }
            self.feed_live(&[byte])?;
            self.word.push(byte)?;
            self.since_snapshot += 1;
        }
        Ok(())
    }

    /// Feeds bytes in order, stopping at the first refused one.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"see you")?;
    /// assert_eq!(session.word(), b"you");
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn push_bytes(&mut self, bytes: &[u8]) -> Result<(), Error> {
        bytes.iter().try_for_each(|&b| self.push(b))
    }

    /// Deletes the last byte; `Ok(false)` if there was nothing to delete (at the start, or
    /// when everything typed has fallen out of the history).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// assert!(!session.backspace()?);
    /// session.push_bytes(b"ab c")?;
    /// assert!(session.backspace()?); // inside the word "c"
    /// assert!(session.backspace()?); // across the space: recovers "ab"
    /// assert_eq!(session.word(), b"ab");
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn backspace(&mut self) -> Result<bool, Error> {
        if self.history.pop().is_none() {
            return Ok(false);
        }
        self.search = Search::default();
        if self.since_snapshot == 0 || self.since_snapshot > self.history.len() + 1 {
            return self.recover().map(|()| true);
        }
        // Back to the snapshot, then the bytes after it again.
        self.since_snapshot -= 1;
        let mut tail = [0u8; MAX_SINCE_SNAPSHOT + MAX_WORD_LEN];
        let skip = self.history.len() - self.since_snapshot;
        for (t, b) in tail.iter_mut().zip(self.history.iter().skip(skip)) {
            *t = b;
        }
        let tail = tail.get(..self.since_snapshot).unwrap_or(&[]);
        self.states.copy_state(SNAPSHOT, LIVE);
        self.live_logits.copy_from_slice(self.snapshot_logits);
        self.feed_live(tail)?;
        self.word.clear();
        let start = tail
            .iter()
            .rposition(|&b| is_boundary(b))
            .map_or(0, |p| p + 1);
        for &b in tail.get(start..).unwrap_or(&[]) {
            self.word.push(b)?;
        }
        Ok(true)
    }

    /// Rebuilds the state, snapshot and word from the history alone, as typing it afresh
    /// does.
    fn recover(&mut self) -> Result<(), Error> {
        self.prime()?;
        self.snapshot();
        self.word.clear();
        let history = self.history.clone();
        for b in history.iter() {
            // Every byte of the history was accepted when it was pushed.
            self.advance(b)?;
        }
        Ok(())
    }

    /// Zero state, then [`PRIME_BYTE`].
    fn prime(&mut self) -> Result<(), Error> {
        self.states.reset(LIVE);
        self.feed_live(&[PRIME_BYTE])
    }

    /// Runs `bytes` through the model on the live state and keeps the logits after them.
    fn feed_live(&mut self, bytes: &[u8]) -> Result<(), Error> {
        if bytes.is_empty() {
            return Ok(());
        }
        let logits = self
            .states
            .feed(LIVE, &self.weights, &mut self.scratch, bytes)?;
        self.live_logits.copy_from_slice(logits);
        Ok(())
    }

    /// Keeps the live state as the snapshot.
    fn snapshot(&mut self) {
        self.states.copy_state(LIVE, SNAPSHOT);
        self.snapshot_logits.copy_from_slice(self.live_logits);
        self.since_snapshot = 0;
    }

    /// The `options.width` most likely completions of the current word (or, right after a
    /// boundary, of the next word), best first. See [`beam search`](super::beam_search).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 4>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"good ")?;
    /// let next = session.suggest(&SearchOptions { max_steps: 50, ..SearchOptions::new(4) })?;
    /// assert!(next.steps <= 50);
    /// assert!(next.list.windows(2).all(|w| !w[0].finished || !w[1].finished
    ///     || w[0].logprob >= w[1].logprob));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn suggest(&mut self, options: &SearchOptions<'_>) -> Result<Suggestions<K>, Error> {
        self.suggest_within(options, usize::MAX)
    }

    /// [`suggest`](Session::suggest) in parts: starts a new search and runs at most `steps`
    /// engine steps of it, then returns the best so far (with
    /// [`cut_short`](Suggestions::cut_short) set while it is not done: the words found, then
    /// the best beams not yet followed, unfinished). [`refine`](Session::refine) goes on with
    /// it. Firmware can so show suggestions within a latency limit and improve them while
    /// no key is pressed; the final result is exactly that of `suggest`.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 3>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"the ")?;
    /// let options = SearchOptions::new(3);
    /// let whole = session.suggest(&options)?;
    /// let mut found = session.suggest_within(&options, 2)?;
    /// assert!(found.steps <= 2);
    /// while session.is_refining() {
    ///     found = session.refine(&options, 2)?;
    /// }
    /// assert_eq!(found, whole);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn suggest_within(
        &mut self,
        options: &SearchOptions<'_>,
        steps: usize,
    ) -> Result<Suggestions<K>, Error> {
        let mut before = [0u8; MAX_PHRASE_LEN];
        let before = self.text_before_word(&mut before);
        self.search = Search::start(self.word.as_bytes(), before, LIVE, Shape::Free, options)?;
        self.refine(options, steps)
    }

    /// Runs at most `steps` more engine steps of the search that
    /// [`suggest_within`](Session::suggest_within) started (give the same `options`), and
    /// returns the best so far. After an edit (or a [`keys`](Session::keys) search) there is
    /// none to go on with: it gives the last result again.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 3>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"wo")?;
    /// let first = session.suggest_within(&SearchOptions::new(3), 0)?;
    /// assert!(first.cut_short && first.steps == 0);
    /// let more = session.refine(&SearchOptions::new(3), 1)?;
    /// assert!(more.steps <= 1);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn refine(
        &mut self,
        options: &SearchOptions<'_>,
        steps: usize,
    ) -> Result<Suggestions<K>, Error> {
        let root = Root {
            logits: self.live_logits,
            word: self.word.as_bytes(),
        };
        self.search.run(
            &self.weights,
            &mut self.scratch,
            &mut self.states,
            root,
            FIRST_BEAM,
            Shape::Free,
            options,
            steps,
        )?;
        Ok(self.search.result(options))
    }

    /// Whether the last search started by [`suggest_within`](Session::suggest_within) has
    /// more to do ([`refine`](Session::refine) goes on with it).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 3>::new(model, &mut floats, scratch)?;
    /// session.suggest(&SearchOptions::new(3))?;
    /// assert!(!session.is_refining());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn is_refining(&self) -> bool {
        self.search.is_running()
    }

    /// The `options.width` most likely words that continue the current word with one letter
    /// of each key of `keys` in turn (12-key entry, e.g. `b"4663"` with
    /// [`KeyMap::E161`]), ranked by the model including the end of the word. A key stands
    /// for every character of its set, capitals included (see [`KeyMap`] for forcing a
    /// case).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions, KeyMap}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 3>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"it is ")?;
    /// let words = session.keys(b"4663", &KeyMap::E161, &SearchOptions::new(3))?;
    /// for s in &words.list {
    ///     assert_eq!(s.text.len(), 4);
    ///     assert!(b"ghiGHI".contains(&s.text[0]) && b"mnoMNO".contains(&s.text[1]));
    /// }
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn keys(
        &mut self,
        keys: &[u8],
        map: &KeyMap,
        options: &SearchOptions<'_>,
    ) -> Result<Suggestions<K>, Error> {
        map.check(keys)?;
        if self.word.as_bytes().len() + keys.len() > MAX_WORD_LEN {
            return Err(Error::CapacityExceeded {
                buffer: "word",
                capacity: MAX_WORD_LEN,
            });
        }
        let shape = Shape::Keys { map, keys };
        let mut search = Search::<K>::start(self.word.as_bytes(), &[], LIVE, shape, options)?;
        let root = Root {
            logits: self.live_logits,
            word: self.word.as_bytes(),
        };
        let run = search.run(
            &self.weights,
            &mut self.scratch,
            &mut self.states,
            root,
            FIRST_BEAM,
            shape,
            options,
            usize::MAX,
        );
        // The beam slots now hold this search's states.
        self.search = Search::default();
        run.map(|()| search.result(options))
    }

    /// The last bytes of the history before the current word (at most `out.len()`), in
    /// `out`: the context of a phrase draft.
    fn text_before_word<'o>(&self, out: &'o mut [u8]) -> &'o [u8] {
        let end = self
            .history
            .len()
            .saturating_sub(self.word.as_bytes().len());
        let start = end.saturating_sub(out.len());
        let mut n = 0;
        for (o, b) in out
            .iter_mut()
            .zip(self.history.iter().skip(start).take(end - start))
        {
            *o = b;
            n += 1;
        }
        out.get(..n).unwrap_or(&[])
    }

    /// The word typed since the last boundary.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"one tw")?;
    /// assert_eq!(session.word(), b"tw");
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn word(&self) -> &[u8] {
        self.word.as_bytes()
    }

    /// The last bytes typed (at most `H`), oldest first.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"hi")?;
    /// assert!(session.history().iter().eq(*b"hi"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn history(&self) -> &TextHistory<H> {
        &self.history
    }

    /// The logits of the byte after the text (256 values).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// assert_eq!(session.logits().len(), 256);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn logits(&self) -> &[f32] {
        self.live_logits
    }

    /// The model.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// assert_eq!(session.weights().dims().blocks, 1);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn weights(&self) -> &W {
        &self.weights
    }

    /// f32 elements [`save`](Session::save) writes: the live state and the snapshot, each
    /// with the logits after it, and the number of bytes typed after the snapshot.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// let state_len = session.weights().dims().state_len();
    /// assert_eq!(session.saved_len(), 2 * (state_len + 256) + 1);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn saved_len(&self) -> usize {
        2 * (self.weights.dims().state_len() + VOCAB) + 1
    }

    /// Copies the live state and the snapshot (with their logits, and the bytes typed after
    /// the snapshot) into the first
    /// [`saved_len`](Session::saved_len) elements of `out`. With [`word`](Session::word)
    /// and [`history`](Session::history) this is everything a session over the same model
    /// needs to continue exactly where this one is (see [`restore`](Session::restore)).
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::Session};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let mut floats = [0.0f32; 8192];
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let mut session = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// session.push_bytes(b"hi")?;
    /// let mut saved = [0.0f32; 1024];
    /// session.save(&mut saved)?;
    /// assert!(session.save(&mut saved[..3]).is_err());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn save(&self, out: &mut [f32]) -> Result<(), Error> {
        let (needed, actual) = (self.saved_len(), out.len());
        let stride = needed / 2;
        let out = out.get_mut(..needed).ok_or(Error::BufferTooSmall {
            buffer: "saved session",
            needed,
            actual,
        })?;
        let state_len = self.weights.dims().state_len();
        for ((slot, logits), dst) in [
            (LIVE, &*self.live_logits),
            (SNAPSHOT, &*self.snapshot_logits),
        ]
        .into_iter()
        .zip(out.chunks_exact_mut(stride))
        {
            let (state, after) = dst.split_at_mut(state_len.min(dst.len()));
            self.states.read(slot, state);
            after.copy_from_slice(logits);
        }
        if let Some(last) = out.last_mut() {
            *last = self.since_snapshot as f32;
        }
        Ok(())
    }

    /// Continues from a state saved by [`save`](Session::save) of a session over the same
    /// model, with that session's [`word`](Session::word) and [`history`](Session::history):
    /// afterwards this session behaves bit for bit as that one did. A `saved` shorter than
    /// [`saved_len`](Session::saved_len), a word longer than [`MAX_WORD_LEN`], or a count of
    /// bytes after the snapshot that is not a whole number between the word's length and the
    /// history's is refused and changes nothing.
    ///
    /// ```
    /// # use inkling_core::{Model, Scratch, session::{Session, SearchOptions}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let model = Model::from_bytes(&image)?;
    /// # let (mut floats, mut floats2) = ([0.0f32; 8192], [0.0f32; 8192]);
    /// # let (mut work, mut act) = ([0.0f32; 512], [0i16; 64]);
    /// # let (mut work2, mut act2) = ([0.0f32; 512], [0i16; 64]);
    /// # let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// # let scratch2 = Scratch::new(model.dims(), &mut work2, &mut act2)?;
    /// let mut first = Session::<_, 2>::new(model, &mut floats, scratch)?;
    /// first.push_bytes(b"see yo")?;
    /// let mut saved = [0.0f32; 1024];
    /// first.save(&mut saved)?;
    /// let mut second = Session::<_, 2>::new(model, &mut floats2, scratch2)?;
    /// second.restore(&saved, first.word(), first.history())?;
    /// assert_eq!(second.logits(), first.logits());
    /// assert_eq!(second.suggest(&SearchOptions::new(2))?, first.suggest(&SearchOptions::new(2))?);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn restore(
        &mut self,
        saved: &[f32],
        word: &[u8],
        history: &TextHistory<H>,
    ) -> Result<(), Error> {
        let (needed, actual) = (self.saved_len(), saved.len());
        let state_len = self.weights.dims().state_len();
        let saved = saved.get(..needed).ok_or(Error::BufferTooSmall {
            buffer: "saved session",
            needed,
            actual,
        })?;
        let mut restored = WordBuffer::new();
        for &b in word {
            restored.push(b)?;
        }
        let since = saved.last().copied().unwrap_or(0.0);
        let valid = (word.len() as f32..=history.len() as f32).contains(&since)
            && since == libm::truncf(since);
        if !valid {
            return Err(Error::CapacityExceeded {
                buffer: "bytes after the snapshot",
                capacity: history.len(),
            });
        }
        let (live, snapshot) = saved.split_at(needed / 2);
        for (slot, src) in [(LIVE, live), (SNAPSHOT, snapshot)] {
            let (state, logits) = src.split_at_checked(state_len).unwrap_or((&[], &[]));
            self.states.write(slot, state);
            let target = if slot == LIVE {
                &mut *self.live_logits
            } else {
                &mut *self.snapshot_logits
            };
            for (t, &l) in target.iter_mut().zip(logits) {
                *t = l;
            }
        }
        self.word = restored;
        self.history = history.clone();
        self.since_snapshot = since as usize;
        self.search = Search::default();
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::image::example::tiny_image;
    use crate::session::{Word, WordFilter, WordList};
    use crate::Model;

    const FLOATS: usize = 4096;

    /// Buffers for a session over the tiny example model.
    struct Buffers {
        floats: [f32; FLOATS],
        work: [f32; 512],
        act: [i16; 64],
    }

    impl Buffers {
        fn new() -> Self {
            Buffers {
                floats: [0.0; FLOATS],
                work: [0.0; 512],
                act: [0; 64],
            }
        }

        fn session<'b, const K: usize, const H: usize>(
            &'b mut self,
            model: Model<'b>,
        ) -> Session<'b, Model<'b>, K, H> {
            let dims = *model.dims();
            let scratch = Scratch::new(&dims, &mut self.work, &mut self.act).unwrap();
            Session::new(model, &mut self.floats, scratch).unwrap()
        }
    }

    fn bits(s: &[f32]) -> heapless::Vec<u32, 256> {
        s.iter().map(|v| v.to_bits()).collect()
    }

    #[test]
    fn full_word_refuses_a_byte_and_changes_nothing() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<2, 64>(model);
        for _ in 0..MAX_WORD_LEN {
            s.push(b'x').unwrap();
        }
        let before = bits(s.logits());
        let err = s.push(b'y').unwrap_err();
        assert_eq!(
            err,
            Error::CapacityExceeded {
                buffer: "word",
                capacity: MAX_WORD_LEN
            }
        );
        assert_eq!(bits(s.logits()), before);
        assert_eq!(s.word().len(), MAX_WORD_LEN);
        assert_eq!(s.history().len(), MAX_WORD_LEN);
        // A full word may only end, and the word as typed is never offered: nothing is.
        let found = s.suggest(&SearchOptions::new(2)).unwrap();
        assert!(found.list.is_empty());
        assert_eq!(found.steps, 0);
        s.push(b' ').unwrap();
        assert!(s.word().is_empty());
    }

    #[test]
    fn backspace_at_the_start_does_nothing() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<2, 64>(model);
        let fresh = bits(s.logits());
        assert!(!s.backspace().unwrap());
        assert_eq!(bits(s.logits()), fresh);
        s.push(b'a').unwrap();
        assert!(s.backspace().unwrap());
        assert!(!s.backspace().unwrap());
        assert_eq!(bits(s.logits()), fresh);
    }

    #[test]
    fn backspace_gives_the_state_of_typing_the_shorter_text() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let text = b"ab cd, ef\ng  hi jk";
        for cut in 0..text.len() {
            let mut b1 = Buffers::new();
            let mut edited = b1.session::<2, 64>(model);
            edited.push_bytes(text).unwrap();
            for _ in cut..text.len() {
                assert!(edited.backspace().unwrap());
            }
            let mut b2 = Buffers::new();
            let mut fresh = b2.session::<2, 64>(model);
            fresh.push_bytes(&text[..cut]).unwrap();
            assert_eq!(bits(edited.logits()), bits(fresh.logits()), "cut {cut}");
            assert_eq!(edited.word(), fresh.word());
            let (mut e, mut f) = ([0.0f32; 512], [0.0f32; 512]);
            edited.states.read(LIVE, &mut e);
            fresh.states.read(LIVE, &mut f);
            assert!(
                e.iter().zip(&f).all(|(a, b)| a.to_bits() == b.to_bits()),
                "live state, cut {cut}"
            );
            // The snapshot may sit elsewhere after an edit, but whatever follows gives the
            // same states: typing on, and deleting everything back to the start.
            edited.push_bytes(b"x y").unwrap();
            fresh.push_bytes(b"x y").unwrap();
            while fresh.backspace().unwrap() {
                assert!(edited.backspace().unwrap());
                assert_eq!(bits(edited.logits()), bits(fresh.logits()), "cut {cut}");
            }
        }
    }

    #[test]
    fn a_search_in_parts_gives_what_it_gives_at_once() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<3, 64>(model);
        let options = SearchOptions::new(3);
        for context in [&b""[..], b"a", b"the ", b"we w", b"x,y"] {
            s.clear().unwrap();
            s.push_bytes(context).unwrap();
            let whole = s.suggest(&options).unwrap();
            for part in [0, 1, 2, 5] {
                let mut found = s.suggest_within(&options, part).unwrap();
                assert!(found.steps <= part);
                let mut calls = 0;
                while s.is_refining() {
                    found = s.refine(&options, part.max(1)).unwrap();
                    calls += 1;
                }
                assert_eq!(found, whole, "{context:?} in parts of {part}");
                assert!(calls <= whole.steps + 1);
            }
        }
        // An edit ends the search kept: refine gives the last result again.
        s.suggest_within(&options, 0).unwrap();
        s.push(b'z').unwrap();
        assert!(!s.is_refining());
    }

    #[test]
    fn correcting_a_word_after_its_boundary_needs_no_recovery() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b1 = Buffers::new();
        // A history of 40 bytes: a recovery would forget the start of the text.
        let mut s = b1.session::<2, 40>(model);
        let text = b"one two three four five six seven eight nine ten ";
        s.push_bytes(text).unwrap();
        s.backspace().unwrap(); // the final space: back to the start of "ten", no recovery
        assert_eq!(s.word(), b"ten");
        let mut b2 = Buffers::new();
        let mut fresh = b2.session::<2, 64>(model);
        fresh.push_bytes(&text[..text.len() - 1]).unwrap();
        assert_eq!(bits(s.logits()), bits(fresh.logits()));
    }

    #[test]
    fn text_older_than_the_history_is_forgotten_on_recovery() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b1 = Buffers::new();
        let mut s = b1.session::<2, 40>(model);
        let text = b"one two three four five six seven eight nine ten ";
        s.push_bytes(text).unwrap();
        assert_eq!(s.history().len(), 40);
        // "ten " deleted back to its start, then the space before it: recovery from the 35
        // bytes left in the history.
        for _ in 0..5 {
            s.backspace().unwrap();
        }
        let kept: heapless::Vec<u8, 40> = s.history().iter().collect();
        assert_eq!(&kept[..], &text[text.len() - 40..text.len() - 5]);
        let mut b2 = Buffers::new();
        let mut fresh = b2.session::<2, 40>(model);
        fresh.push_bytes(&kept).unwrap();
        assert_eq!(bits(s.logits()), bits(fresh.logits()));
        assert_eq!(s.word(), b"nine");
    }

    #[test]
    fn typing_a_long_text_keeps_every_buffer_within_its_capacity() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let dims = *model.dims();
        let mut b = Buffers::new();
        let needed = dims.session_floats(3);
        let scratch = Scratch::new(&dims, &mut b.work, &mut b.act).unwrap();
        // Exactly the documented size is enough, forever.
        let mut s = Session::<_, 3, 64>::new(model, &mut b.floats[..needed], scratch).unwrap();
        let phrase = b"a quick test of the session, again and again.\n";
        for round in 0..100 {
            s.push_bytes(phrase).unwrap();
            assert!(s.history().len() <= 64 && s.word().len() <= MAX_WORD_LEN);
            if round % 10 == 0 {
                s.backspace().unwrap();
                let found = s.suggest(&SearchOptions::new(3)).unwrap();
                assert!(found.list.len() <= 3);
                s.push(b'\n').unwrap();
            }
        }
        assert_eq!(s.history().len(), 64);
        assert_eq!(s.logits().len(), 256);
    }

    #[test]
    fn too_small_a_buffer_is_refused_with_its_size() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let dims = *model.dims();
        let mut b = Buffers::new();
        let needed = dims.session_floats(3);
        let scratch = Scratch::new(&dims, &mut b.work, &mut b.act).unwrap();
        let err = Session::<_, 3>::new(model, &mut b.floats[..needed - 1], scratch).unwrap_err();
        assert_eq!(
            err,
            Error::BufferTooSmall {
                buffer: "session",
                needed,
                actual: needed - 1
            }
        );
    }

    #[test]
    fn width_above_k_is_refused_and_zero_gives_nothing() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<2, 64>(model);
        s.push_bytes(b"th").unwrap();
        let err = s.suggest(&SearchOptions::new(3)).unwrap_err();
        assert_eq!(
            err,
            Error::CapacityExceeded {
                buffer: "beams",
                capacity: 2
            }
        );
        let none = s.suggest(&SearchOptions::new(0)).unwrap();
        assert!(none.list.is_empty() && none.steps == 0 && !none.cut_short);
    }

    #[test]
    fn k_of_one_gives_one_word_and_k_above_the_lexicon_gives_every_word() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<1, 64>(model);
        s.push_bytes(b"he").unwrap();
        let one = s.suggest(&SearchOptions::new(1)).unwrap();
        assert_eq!(one.list.len(), 1);

        let mut b = Buffers::new();
        let mut s = b.session::<5, 64>(model);
        s.push_bytes(b"he").unwrap();
        let lexicon = WordList::new(b"hello\nhelp\nzebra\n").unwrap();
        let options = SearchOptions {
            max_steps: 10_000,
            margin: f32::INFINITY,
            filter: WordFilter {
                deny: WordList::EMPTY,
                lexicon: Some(lexicon),
            },
            ..SearchOptions::new(5)
        };
        let found = s.suggest(&options).unwrap();
        // The lexicon matches in any case: every word offered is "hello" or "help" in some
        // case (ASCII case folding, ANSI X3.4), and both are there.
        let texts: heapless::Vec<Word, 5> = found
            .list
            .iter()
            .map(|x| x.text.iter().map(u8::to_ascii_lowercase).collect())
            .collect();
        assert!(texts.iter().all(|t| t == b"hello" || t == b"help"));
        assert!(texts.iter().any(|t| t == b"hello") && texts.iter().any(|t| t == b"help"));
        assert!(found.list.iter().all(|x| x.finished) && !found.cut_short);
    }

    #[test]
    fn step_budget_zero_and_one() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<3, 64>(model);
        s.push_bytes(b"to").unwrap();
        let zero = s
            .suggest(&SearchOptions {
                max_steps: 0,
                ..SearchOptions::new(3)
            })
            .unwrap();
        assert!(zero.cut_short && zero.steps == 0);
        // Without a step nothing finishes (the word as typed is never offered): the three
        // best one-byte extensions are left, but those that end inside a UTF-8 character.
        assert!((1..=3).contains(&zero.list.len()));
        for x in &zero.list {
            assert!(!x.finished && x.text.len() == 3 && x.text.starts_with(b"to"));
            assert!(core::str::from_utf8(&x.text).is_ok());
        }
        let one = s
            .suggest(&SearchOptions {
                max_steps: 1,
                ..SearchOptions::new(3)
            })
            .unwrap();
        assert!(one.cut_short && one.steps == 1);
        assert!((1..=3).contains(&one.list.len()));
        assert!(one.list.iter().all(|x| x.text.len() > 2));
    }

    #[test]
    fn deny_list_words_are_never_offered() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<4, 64>(model);
        s.push_bytes(b"a").unwrap();
        let plain = s.suggest(&SearchOptions::new(4)).unwrap();
        // Deny exactly the words found, then search again.
        let mut deny = [0u8; 4 * (MAX_WORD_LEN + 1)];
        let mut words: heapless::Vec<&[u8], 4> = plain.list.iter().map(|x| &x.text[..]).collect();
        words.sort_unstable();
        let mut len = 0;
        for w in &words {
            deny[len..len + w.len()].copy_from_slice(w);
            deny[len + w.len()] = b'\n';
            len += w.len() + 1;
        }
        let options = SearchOptions {
            filter: WordFilter {
                deny: WordList::new(&deny[..len]).unwrap(),
                lexicon: None,
            },
            ..SearchOptions::new(4)
        };
        let again = s.suggest(&options).unwrap();
        assert!(!again.list.is_empty());
        for x in &again.list {
            assert!(!words.contains(&&x.text[..]), "{:?}", x.text);
        }
    }

    #[test]
    fn keys_give_words_of_those_letters_and_refuse_bad_keys() {
        let image = tiny_image();
        let model = Model::from_bytes(&image).unwrap();
        let mut b = Buffers::new();
        let mut s = b.session::<4, 64>(model);
        s.push_bytes(b"go ").unwrap();
        // Every candidate followed, so that four words are found.
        let every = SearchOptions {
            margin: f32::INFINITY,
            ..SearchOptions::new(4)
        };
        let found = s.keys(b"4663", &KeyMap::E161, &every).unwrap();
        assert_eq!(found.list.len(), 4);
        for x in &found.list {
            assert!(x.finished && x.text.len() == 4);
            for (&letter, &key) in x.text.iter().zip(b"4663") {
                assert!(KeyMap::E161.letters(key).unwrap().contains(letter));
            }
        }
        assert_eq!(
            s.keys(b"40", &KeyMap::E161, &SearchOptions::new(4)),
            Err(Error::NotALetterKey {
                position: 1,
                byte: b'0'
            })
        );
        let long = [b'2'; MAX_WORD_LEN + 1];
        assert!(s
            .keys(&long, &KeyMap::E161, &SearchOptions::new(4))
            .is_err());
    }
}
