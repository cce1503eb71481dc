//! A serial port of `embedded-hal-nb` 1.0 (the byte-at-a-time `serial::Read` and `Write`
//! every maintained Cortex-M HAL offers) as the `embedded_io` 0.7 `Read`, `ReadReady` and
//! `Write` that [`board_typing`](crate::board_typing) takes: for a HAL whose UART speaks
//! another `embedded-io` version, or none (`stm32f4xx-hal` 0.23 reads only through
//! `embedded-hal-nb`).

use embedded_hal_nb::{nb, serial};

/// A receive or send error of the port, by its kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error("serial port: {0:?}")]
pub struct SerialError(pub serial::ErrorKind);

impl embedded_io::Error for SerialError {
    fn kind(&self) -> embedded_io::ErrorKind {
        embedded_io::ErrorKind::Other
    }
}

/// The port `S`, with room for the one byte [`ReadReady`](embedded_io::ReadReady) takes
/// from it to learn that one is there.
#[derive(Debug)]
pub struct NbSerial<S> {
    port: S,
    waiting: Option<u8>,
}

impl<S> NbSerial<S> {
    /// Wraps `port`.
    pub const fn new(port: S) -> Self {
        NbSerial {
            port,
            waiting: None,
        }
    }
}

fn kind_of<E: serial::Error>(e: E) -> SerialError {
    SerialError(e.kind())
}

impl<S> embedded_io::ErrorType for NbSerial<S> {
    type Error = SerialError;
}

impl<S: serial::Read<u8>> embedded_io::ReadReady for NbSerial<S> {
    fn read_ready(&mut self) -> Result<bool, SerialError> {
        if self.waiting.is_none() {
            match self.port.read() {
                Ok(byte) => self.waiting = Some(byte),
                Err(nb::Error::WouldBlock) => {}
                Err(nb::Error::Other(e)) => return Err(kind_of(e)),
            }
        }
        Ok(self.waiting.is_some())
    }
}

impl<S: serial::Read<u8>> embedded_io::Read for NbSerial<S> {
    /// Waits for the first byte, then takes what has arrived without waiting again.
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, SerialError> {
        let mut got = 0;
        for slot in buf.iter_mut() {
            let byte = match self.waiting.take() {
                Some(byte) => byte,
                None if got == 0 => nb::block!(self.port.read()).map_err(kind_of)?,
                None => match self.port.read() {
                    Ok(byte) => byte,
                    Err(nb::Error::WouldBlock) => break,
                    Err(nb::Error::Other(e)) => return Err(kind_of(e)),
                },
            };
            *slot = byte;
            got += 1;
        }
        Ok(got)
    }
}

impl<S: serial::Write<u8>> embedded_io::Write for NbSerial<S> {
    fn write(&mut self, buf: &[u8]) -> Result<usize, SerialError> {
        for &byte in buf {
            nb::block!(self.port.write(byte)).map_err(kind_of)?;
        }
        Ok(buf.len())
    }

    fn flush(&mut self) -> Result<(), SerialError> {
        nb::block!(self.port.flush()).map_err(kind_of)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use embedded_io::{Read, ReadReady, Write};
    use std::collections::VecDeque;

    /// A port with bytes waiting to be received and a record of those sent.
    #[derive(Default)]
    struct Port {
        incoming: VecDeque<u8>,
        sent: Vec<u8>,
    }

    impl serial::ErrorType for Port {
        type Error = serial::ErrorKind;
    }

    impl serial::Read<u8> for Port {
        fn read(&mut self) -> nb::Result<u8, serial::ErrorKind> {
            self.incoming.pop_front().ok_or(nb::Error::WouldBlock)
        }
    }

    impl serial::Write<u8> for Port {
        fn write(&mut self, byte: u8) -> nb::Result<(), serial::ErrorKind> {
            self.sent.push(byte);
            Ok(())
        }

        fn flush(&mut self) -> nb::Result<(), serial::ErrorKind> {
            Ok(())
        }
    }

    #[test]
    fn a_byte_seen_by_read_ready_is_the_next_one_read() {
        let mut serial = NbSerial::new(Port::default());
        assert!(!serial.read_ready().unwrap());
        serial.port.incoming.extend(*b"hut");
        assert!(serial.read_ready().unwrap());
        assert!(serial.read_ready().unwrap()); // asking again loses nothing
        let mut buf = [0u8; 8];
        assert_eq!(serial.read(&mut buf).unwrap(), 3);
        assert_eq!(&buf[..3], b"hut");
        assert!(!serial.read_ready().unwrap());
    }

    #[test]
    fn written_bytes_reach_the_port_in_order() {
        let mut serial = NbSerial::new(Port::default());
        serial.write_all(b"base\n").unwrap();
        serial.flush().unwrap();
        assert_eq!(serial.port.sent, b"base\n");
    }
}
