//! Typed bytes in, one line at a time.
//!
//! A host pipe or a UART delivers bytes in chunks whose boundaries vary from run to run;
//! buffering by line makes what the firmware does independent of them.

use embedded_io::Read;

/// One line read by [`LineReader::next_line`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Line<'a> {
    /// The bytes of the line, without its line feed.
    pub bytes: &'a [u8],
    /// False when the line was cut: it was longer than the buffer, or the input ended before
    /// its line feed. The rest of a cut line comes as the next line.
    pub complete: bool,
}

/// Buffers bytes from `R` and hands them out by line (ending in LF), using `N` bytes of RAM.
#[derive(Debug)]
pub struct LineReader<R, const N: usize> {
    source: R,
    buf: [u8; N],
    /// Bytes `start..end` of `buf` are read but not handed out yet.
    start: usize,
    end: usize,
    at_end: bool,
}

impl<R: Read, const N: usize> LineReader<R, N> {
    /// A reader over `source`.
    pub const fn new(source: R) -> Self {
        LineReader {
            source,
            buf: [0; N],
            start: 0,
            end: 0,
            at_end: false,
        }
    }

    /// The next line, or `None` once the input has ended and everything was handed out.
    pub fn next_line(&mut self) -> Result<Option<Line<'_>>, R::Error> {
        loop {
            let pending = &self.buf[self.start..self.end];
            if let Some(lf) = pending.iter().position(|&b| b == b'\n') {
                let from = self.start;
                self.start += lf + 1;
                return Ok(Some(Line {
                    bytes: &self.buf[from..from + lf],
                    complete: true,
                }));
            }
            let full = self.start == 0 && self.end == N;
            if full || (self.at_end && self.start < self.end) {
                let from = self.start;
                self.start = self.end;
                return Ok(Some(Line {
                    bytes: &self.buf[from..self.end],
                    complete: false,
                }));
            }
            if self.at_end {
                return Ok(None);
            }
            // Make room at the back, then read more.
            self.buf.copy_within(self.start..self.end, 0);
            self.end -= self.start;
            self.start = 0;
            let got = self.source.read(&mut self.buf[self.end..])?;
            if got == 0 {
                self.at_end = true;
            }
            self.end += got;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use core::convert::Infallible;

    /// Hands out its bytes in chunks of the given sizes, like a pipe.
    struct Chunked<'a> {
        bytes: &'a [u8],
        sizes: core::iter::Cycle<core::slice::Iter<'a, usize>>,
    }

    impl embedded_io::ErrorType for Chunked<'_> {
        type Error = Infallible;
    }

    impl Read for Chunked<'_> {
        fn read(&mut self, buf: &mut [u8]) -> Result<usize, Infallible> {
            let n = (*self.sizes.next().unwrap())
                .min(buf.len())
                .min(self.bytes.len());
            buf[..n].copy_from_slice(&self.bytes[..n]);
            self.bytes = &self.bytes[n..];
            Ok(n)
        }
    }

    fn lines<const N: usize>(input: &[u8], sizes: &[usize]) -> Vec<(Vec<u8>, bool)> {
        let source = Chunked {
            bytes: input,
            sizes: sizes.iter().cycle(),
        };
        let mut reader = LineReader::<_, N>::new(source);
        let mut out = Vec::new();
        while let Some(line) = reader.next_line().unwrap() {
            out.push((line.bytes.to_vec(), line.complete));
        }
        out
    }

    #[test]
    fn chunk_boundaries_do_not_change_the_lines() {
        let input = b"the quick\n\nbrown fox\njumps";
        let expected = vec![
            (b"the quick".to_vec(), true),
            (Vec::new(), true),
            (b"brown fox".to_vec(), true),
            (b"jumps".to_vec(), false),
        ];
        for sizes in [&[1usize][..], &[3], &[64], &[2, 7, 1, 5]] {
            assert_eq!(lines::<16>(input, sizes), expected, "chunks {sizes:?}");
        }
    }

    #[test]
    fn a_line_longer_than_the_buffer_is_cut() {
        let got = lines::<4>(b"abcdefg\nh\n", &[3]);
        assert_eq!(
            got,
            vec![
                (b"abcd".to_vec(), false),
                (b"efg".to_vec(), true),
                (b"h".to_vec(), true),
            ]
        );
    }

    #[test]
    fn empty_input_has_no_lines() {
        assert!(lines::<8>(b"", &[5]).is_empty());
    }
}
