//! No URL fragment makes the share-link decoder panic: random text, and a
//! real link cut short or damaged at random, come back as Ok or Err. The
//! cargo-fuzz target `share_link` in `fuzz/` searches the same property for
//! much longer; a crash it finds becomes a test here named after it.

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine;
use tussock_app::examples::EXAMPLES;
use tussock_app::share::{decode_fragment, encode_fragment};

/// A seeded xorshift generator: the same cases on every run.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }

    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

const ALPHABET: &[u8] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_=+/#s% ";

/// Decode; a scenario accepted must come back whole from its own link.
fn decode(fragment: &str) {
    if let Ok(scenario) = decode_fragment(fragment) {
        let again = decode_fragment(&encode_fragment(&scenario));
        assert_eq!(again.as_ref(), Ok(&scenario), "{fragment:?}");
    }
}

fn links() -> Vec<String> {
    EXAMPLES
        .iter()
        .map(|e| format!("#{}", encode_fragment(&e.scenario().unwrap())))
        .collect()
}

#[test]
fn random_text_with_and_without_the_key() {
    let mut rng = Rng(0x5eed_0001);
    for _ in 0..2000 {
        let len = rng.below(120);
        let body: String = (0..len)
            .map(|_| ALPHABET[rng.below(ALPHABET.len())] as char)
            .collect();
        decode(&body);
        decode(&format!("#s={body}"));
    }
}

#[test]
fn every_truncation_of_a_real_link() {
    for link in links() {
        assert!(decode_fragment(&link).is_ok(), "{link}");
        for end in 0..link.len() {
            decode(&link[..end]);
        }
    }
}

#[test]
fn real_links_damaged_at_random() {
    let links = links();
    let mut rng = Rng(0x5eed_0002);
    for _ in 0..2000 {
        let mut bytes = links[rng.below(links.len())].clone().into_bytes();
        for _ in 0..1 + rng.below(4) {
            let i = 3 + rng.below(bytes.len() - 3);
            let c = ALPHABET[rng.below(ALPHABET.len())];
            match rng.below(3) {
                0 => bytes[i] = c,
                1 => bytes.insert(i, c),
                _ => {
                    bytes.remove(i);
                }
            }
        }
        decode(&String::from_utf8_lossy(&bytes));
    }
}

/// Well-formed compression of damaged scenario JSON: the damage reaches
/// the scenario parser and checks, not only the base64 and zlib layers.
#[test]
fn well_packed_links_to_damaged_scenarios() {
    const BYTES: &[u8] = b"0123456789-.e[]{}\",:null";
    let mut rng = Rng(0x5eed_0003);
    for _ in 0..1000 {
        let e = &EXAMPLES[rng.below(EXAMPLES.len())];
        let mut json = serde_json::to_vec(&e.scenario().unwrap()).unwrap();
        for _ in 0..1 + rng.below(4) {
            let i = rng.below(json.len());
            json[i] = BYTES[rng.below(BYTES.len())];
        }
        let packed = miniz_oxide::deflate::compress_to_vec_zlib(&json, 6);
        decode(&format!("#s={}", URL_SAFE_NO_PAD.encode(packed)));
    }
}
