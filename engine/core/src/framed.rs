//! The framing shared by the cache's binary files (`outcomes.bin`,
//! `items.bin`): a 16-byte tag, a CRC-32 of everything after it, the
//! identity of the build that wrote the file, then parts each preceded by
//! its length (u32 LE).
//!
//! A file whose tag, checksum or build differs is not opened at all: the
//! readers decode what they find without further checks (an outcome only
//! when it is looked at), so a damaged file, or one whose layout another
//! build chose, must cost only time. Owns no state.

use std::ops::Range;

use crate::index::build_identity;

/// The start of a new file: tag, room for the checksum, build identity.
/// `None` when this build has no identity (it then writes no cache).
pub(crate) fn begin(tag: &[u8; 16]) -> Option<Vec<u8>> {
    let build = build_identity();
    if build.is_empty() {
        return None;
    }
    let mut out = tag.to_vec();
    out.extend_from_slice(&[0; 4]);
    push_part(&mut out, build.as_bytes());
    Some(out)
}

/// Writes the checksum of a file made with [`begin`].
pub(crate) fn finish(mut out: Vec<u8>) -> Vec<u8> {
    let crc = crc32fast::hash(&out[20..]);
    out[16..20].copy_from_slice(&crc.to_le_bytes());
    out
}

/// Where the parts of `bytes` start, when the file has this tag, an intact
/// checksum and this build's identity.
pub(crate) fn open(bytes: &[u8], tag: &[u8; 16]) -> Option<usize> {
    if bytes.get(..16)? != tag {
        return None;
    }
    let crc = u32::from_le_bytes(bytes.get(16..20)?.try_into().ok()?);
    if crc32fast::hash(bytes.get(20..)?) != crc {
        return None;
    }
    let mut at = 20;
    let build = read_part(bytes, &mut at)?;
    let build = &bytes[build];
    (!build.is_empty() && build == build_identity().as_bytes()).then_some(at)
}

/// Appends one part.
pub(crate) fn push_part(out: &mut Vec<u8>, part: &[u8]) {
    out.extend_from_slice(&(part.len() as u32).to_le_bytes());
    out.extend_from_slice(part);
}

/// Reads the part at `at`, moving past it; `None` when it runs past the end.
pub(crate) fn read_part(bytes: &[u8], at: &mut usize) -> Option<Range<usize>> {
    let len = bytes.get(*at..*at + 4)?;
    let n = u32::from_le_bytes(len.try_into().ok()?) as usize;
    let start = *at + 4;
    bytes.get(start..start + n)?;
    *at = start + n;
    Some(start..start + n)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_damaged_truncated_or_foreign_file_is_not_opened() {
        let tag = b"packwright-test1";
        let mut out = begin(tag).expect("the test binary has an identity");
        push_part(&mut out, b"abc");
        let good = finish(out);
        let mut at = open(&good, tag).expect("opens");
        assert_eq!(&good[read_part(&good, &mut at).expect("a part")], b"abc");
        assert_eq!(at, good.len());
        let mut bad = good.clone();
        let last = bad.len() - 1;
        bad[last] ^= 1;
        assert!(open(&bad, tag).is_none(), "one bit changed");
        assert!(open(&good[..good.len() - 1], tag).is_none(), "truncated");
        assert!(open(&good, b"packwright-test2").is_none(), "another tag");
        assert!(open(b"short", tag).is_none());
    }
}
