//! calamine's reading of a shared string table (SST, MS-XLS 2.4.265) replayed without building
//! a string: what each string will cost, in calamine's order, so that a cell naming one can be
//! charged for the copy calamine makes.

use super::{u16_at, u32_at, BYTES_PER_CHAR};

/// A record's body and its continuations, read as calamine reads a shared string table.
struct Joined<'a> {
    data: &'a [u8],
    cont: std::vec::IntoIter<&'a [u8]>,
}

impl<'a> Joined<'a> {
    fn next_part(&mut self) -> bool {
        match self.cont.next() {
            Some(d) => {
                self.data = d;
                true
            }
            None => false,
        }
    }

    fn take(&mut self, n: usize) -> Option<&'a [u8]> {
        let (head, rest) = (self.data.get(..n)?, self.data.get(n..)?);
        self.data = rest;
        Some(head)
    }

    fn skip(&mut self, mut n: usize) -> Option<()> {
        while n > 0 {
            if self.data.is_empty() && !self.next_part() {
                return None;
            }
            let l = n.min(self.data.len());
            self.data = &self.data[l..];
            n -= l;
        }
        Some(())
    }

    /// One string of the table, as calamine's `read_rich_extended_string`; `None` where
    /// calamine would stop with an error (or a panic), which ends its reading of the file.
    fn string(&mut self) -> Option<u64> {
        if self.data.is_empty() {
            return Some(0);
        }
        let head = self.take(3)?;
        let cch = usize::from(u16::from_le_bytes([head[0], head[1]]));
        let flags = head[2];
        let runs = if flags & 0x8 != 0 {
            usize::from(u16_at(self.take(2)?, 0)?)
        } else {
            0
        };
        let ext = if flags & 0x4 != 0 {
            u32_at(self.take(4)?, 0)? as i32 as usize
        } else {
            0
        };
        let mut high = flags & 1 != 0;
        let mut left = cch;
        while left > 0 {
            let l = if high {
                (self.data.len() / 2).min(left)
            } else {
                self.data.len().min(left)
            };
            self.data = &self.data[if high { 2 * l } else { l }..];
            left -= l;
            if left > 0 {
                if !self.next_part() {
                    return None;
                }
                high = self.take(1)?[0] & 1 != 0;
            }
        }
        self.skip(runs * 4)?;
        self.skip(ext)?;
        Some(cch as u64 * BYTES_PER_CHAR)
    }
}

/// The text cost of each string of a shared string table (SST), in calamine's order.
pub(super) fn shared_strings(body: &[u8], cont: Vec<&[u8]>) -> Vec<u64> {
    let mut out = Vec::new();
    let Some(data) = body.get(8..) else {
        return out;
    };
    let mut r = Joined {
        data,
        cont: cont.into_iter(),
    };
    while !r.data.is_empty() || r.next_part() {
        match r.string() {
            Some(cost) => out.push(cost),
            None => break,
        }
    }
    out
}
