//! [`Deferred`]: a value kept in its stored form until something looks at
//! it. A rerun takes most items from the item index and most outcomes from
//! the rerun cache, and looks at few of them (the items whose links it
//! fills or whose result files it writes); decoding every item's inputs and
//! nodes and every outcome, and dropping them again, was most of a rerun's
//! time.

use std::ops::Range;
use std::sync::{Arc, OnceLock};

/// Stored bytes, shared by the values read from them.
pub type Encoded = Arc<Vec<u8>>;

/// How a type is written into the cache files and read back.
pub trait StoredForm: Sized {
    /// The stored bytes of a value.
    fn encode(&self) -> Vec<u8>;
    /// The value back from [`StoredForm::encode`]'s bytes.
    fn decode(bytes: &[u8]) -> Result<Self, postcard::Error>;
}

/// Implements [`StoredForm`] for types stored as their own postcard form
/// (their serde form keeps every value exactly).
macro_rules! stored_as_postcard {
    ($($stored:ty),+ $(,)?) => {$(
        impl $crate::deferred::StoredForm for $stored {
            fn encode(&self) -> Vec<u8> {
                postcard::to_allocvec(self).expect("a value of this build encodes")
            }

            fn decode(bytes: &[u8]) -> Result<$stored, postcard::Error> {
                postcard::from_bytes(bytes)
            }
        }
    )+};
}
pub(crate) use stored_as_postcard;

/// A value, or the bytes it is decoded from when first looked at. Clones
/// share the value (or the bytes and, once decoded, the value).
pub struct Deferred<T>(Arc<Inner<T>>);

struct Inner<T> {
    value: OnceLock<T>,
    /// The stored form (bytes and where in them), for a value read from
    /// a cache file.
    stored: Option<(Encoded, Range<usize>)>,
    /// The file its spans were stored without naming
    /// ([`packwright_api::with_span_file`]), restored when it is decoded.
    span_file: Option<Arc<str>>,
}

impl<T> Deferred<T> {
    /// A value at hand.
    pub fn new(value: T) -> Deferred<T> {
        Deferred(Arc::new(Inner {
            value: OnceLock::from(value),
            stored: None,
            span_file: None,
        }))
    }

    /// Whether the value has been decoded (or was never stored); for tests
    /// that check a rerun looks at no more than it must.
    pub fn is_decoded(&self) -> bool {
        self.0.value.get().is_some()
    }
}

impl<T: StoredForm> Deferred<T> {
    /// A value stored in `bytes[range]`, decoded when first looked at,
    /// with its spans in the file that [`packwright_api::with_span_file`]
    /// sets now.
    pub(crate) fn in_bytes(bytes: Encoded, range: Range<usize>) -> Deferred<T> {
        Deferred(Arc::new(Inner {
            value: OnceLock::new(),
            stored: Some((bytes, range)),
            span_file: packwright_api::span_file(),
        }))
    }

    /// The stored form: the bytes read, when they were stored leaving out
    /// the same file's name as is left out now, or else the value encoded.
    pub(crate) fn stored_form(&self) -> std::borrow::Cow<'_, [u8]> {
        match &self.0.stored {
            Some((bytes, range)) if self.0.span_file == packwright_api::span_file() => {
                std::borrow::Cow::Borrowed(&bytes[range.clone()])
            }
            _ => std::borrow::Cow::Owned((**self).encode()),
        }
    }
}

impl<T: StoredForm + Clone> Deferred<T> {
    /// The value to change, copied first when it is shared.
    pub fn make_mut(&mut self) -> &mut T {
        let unshared = Arc::get_mut(&mut self.0).is_some_and(|inner| inner.value.get().is_some());
        if !unshared {
            *self = Deferred::new((**self).clone());
        }
        let inner = Arc::get_mut(&mut self.0).expect("just made unshared");
        inner.stored = None;
        inner.value.get_mut().expect("decoded")
    }
}

impl<T: StoredForm> std::ops::Deref for Deferred<T> {
    type Target = T;

    fn deref(&self) -> &T {
        self.0.value.get_or_init(|| {
            let bytes = match &self.0.stored {
                Some((bytes, range)) => &bytes[range.clone()],
                None => &[],
            };
            // The bytes are trusted as this build's `encode` wrote them: the
            // cache files are checksummed and headed by the build's identity
            // (see `framed`). Going on with an empty value would change a
            // result.
            let span_file = self.0.span_file.clone();
            packwright_api::with_span_file(span_file, || T::decode(bytes)).unwrap_or_else(|e| {
                panic!(
                    "the rerun cache holds an entry this build cannot read ({e}); run with --fresh"
                )
            })
        })
    }
}

impl<T> Clone for Deferred<T> {
    fn clone(&self) -> Deferred<T> {
        Deferred(Arc::clone(&self.0))
    }
}

impl<T> From<T> for Deferred<T> {
    fn from(value: T) -> Deferred<T> {
        Deferred::new(value)
    }
}

impl<T: StoredForm + std::fmt::Debug> std::fmt::Debug for Deferred<T> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        std::fmt::Debug::fmt(&**self, f)
    }
}

impl<T: StoredForm + PartialEq> PartialEq for Deferred<T> {
    fn eq(&self, other: &Deferred<T>) -> bool {
        Arc::ptr_eq(&self.0, &other.0) || **self == **other
    }
}

/// Written as a byte string, so that reading an item index entry copies
/// the bytes without decoding them.
impl<T: StoredForm> serde::Serialize for Deferred<T> {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_bytes(&self.stored_form())
    }
}

impl<'de, T: StoredForm> serde::Deserialize<'de> for Deferred<T> {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Deferred<T>, D::Error> {
        struct Bytes<T>(std::marker::PhantomData<T>);
        impl<'de, T: StoredForm> serde::de::Visitor<'de> for Bytes<T> {
            type Value = Deferred<T>;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str("stored bytes")
            }
            fn visit_borrowed_bytes<E: serde::de::Error>(
                self,
                bytes: &'de [u8],
            ) -> Result<Deferred<T>, E> {
                Ok(match within_shared(bytes) {
                    Some((shared, range)) => Deferred::in_bytes(shared, range),
                    None => self.visit_bytes(bytes)?,
                })
            }
            fn visit_bytes<E: serde::de::Error>(self, bytes: &[u8]) -> Result<Deferred<T>, E> {
                Ok(Deferred::in_bytes(Arc::new(bytes.to_vec()), 0..bytes.len()))
            }
        }
        d.deserialize_bytes(Bytes(std::marker::PhantomData))
    }
}

thread_local! {
    /// The bytes being decoded by [`decoding_within`] on this thread.
    static SHARED: std::cell::RefCell<Option<Encoded>> = const { std::cell::RefCell::new(None) };
}

/// Runs `decode`, which decodes from (a part of) `shared`: the deferred
/// values it meets are kept as ranges of `shared` rather than copied. A
/// rerun takes a thousand items from the item index, each with two
/// deferred values; copying them was a few thousand allocations and
/// megabytes of fresh memory for every run. (Serde's derived decoders
/// pass no context down, hence the thread's own slot.)
pub(crate) fn decoding_within<R>(shared: &Encoded, decode: impl FnOnce() -> R) -> R {
    /// Puts the slot back as it was, also when `decode` panics.
    struct Restore(Option<Encoded>);
    impl Drop for Restore {
        fn drop(&mut self) {
            let previous = self.0.take();
            SHARED.with(|s| *s.borrow_mut() = previous);
        }
    }
    let _restore = Restore(SHARED.with(|s| s.replace(Some(shared.clone()))));
    decode()
}

/// The shared bytes and the range in them of `bytes`, when `bytes` lies
/// within the bytes [`decoding_within`] decodes on this thread.
fn within_shared(bytes: &[u8]) -> Option<(Encoded, Range<usize>)> {
    SHARED.with(|s| {
        let s = s.borrow();
        let shared = s.as_ref()?;
        let start = (bytes.as_ptr() as usize).checked_sub(shared.as_ptr() as usize)?;
        let end = start.checked_add(bytes.len())?;
        (end <= shared.len()).then(|| (shared.clone(), start..end))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug, Clone, PartialEq)]
    struct Pair(u32, String);

    impl StoredForm for Pair {
        fn encode(&self) -> Vec<u8> {
            postcard::to_allocvec(&(self.0, &self.1)).expect("encodes")
        }
        fn decode(bytes: &[u8]) -> Result<Pair, postcard::Error> {
            postcard::from_bytes::<(u32, String)>(bytes).map(|(n, s)| Pair(n, s))
        }
    }

    #[test]
    fn a_stored_value_is_decoded_when_first_looked_at_and_reads_back_the_same() {
        let value = Pair(7, "belt".into());
        let bytes = postcard::to_allocvec(&Deferred::new(value.clone())).expect("encodes");
        let back: Deferred<Pair> = postcard::from_bytes(&bytes).expect("decodes");
        assert!(!back.is_decoded());
        let again = postcard::to_allocvec(&back).expect("encodes");
        assert_eq!(
            again, bytes,
            "written again without decoding, byte for byte"
        );
        assert!(!back.is_decoded());
        assert_eq!(*back, value);
        assert!(back.is_decoded());
    }

    #[test]
    fn a_value_decoded_within_shared_bytes_keeps_a_range_of_them() {
        let value = Pair(7, "belt".into());
        let bytes: Encoded = postcard::to_allocvec(&Deferred::new(value.clone()))
            .expect("encodes")
            .into();
        let back: Deferred<Pair> =
            decoding_within(&bytes, || postcard::from_bytes(&bytes)).expect("decodes");
        let (shared, range) = back.0.stored.clone().expect("stored");
        assert!(Arc::ptr_eq(&shared, &bytes), "no copy");
        assert_eq!(range.end, bytes.len());
        assert_eq!(*back, value);
        // Outside, the bytes are copied as before.
        let copied: Deferred<Pair> = postcard::from_bytes(&bytes).expect("decodes");
        assert!(!Arc::ptr_eq(
            &copied.0.stored.clone().expect("stored").0,
            &bytes
        ));
        assert_eq!(*copied, value);
    }

    #[test]
    fn changing_a_shared_value_leaves_the_other_copy_alone() {
        let bytes = postcard::to_allocvec(&Deferred::new(Pair(1, "a".into()))).expect("encodes");
        let first: Deferred<Pair> = postcard::from_bytes(&bytes).expect("decodes");
        let mut second = first.clone();
        second.make_mut().0 = 2;
        assert_eq!((*first).0, 1);
        assert_eq!((*second).0, 2);
        assert_eq!(second.stored_form(), Pair(2, "a".into()).encode());
    }
}
