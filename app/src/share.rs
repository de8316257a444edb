//! Share links and saved state: a scenario as text that survives a URL or
//! the browser's storage, and its way back with a clear message on damage.
//!
//! A link carries `#s=` and the scenario JSON, deflated (zlib, RFC 1950)
//! and base64url-encoded without padding.

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine;
use tussock_core::{Scenario, ScenarioError};

/// Prefix of the URL fragment that holds a scenario.
pub const FRAGMENT_KEY: &str = "s=";
/// Longest link most browsers and chat tools keep intact (common practice).
pub const MAX_LINK_CHARS: usize = 8000;
/// Largest inflated scenario accepted from a link, against decompression bombs.
const MAX_INFLATED: usize = 1 << 20;

/// The URL fragment (without `#`) for a scenario.
pub fn encode_fragment(scenario: &Scenario) -> String {
    let json = serde_json::to_string(scenario).unwrap_or_default();
    let packed = miniz_oxide::deflate::compress_to_vec_zlib(json.as_bytes(), 9);
    format!("{FRAGMENT_KEY}{}", URL_SAFE_NO_PAD.encode(packed))
}

/// Why a link could not be opened.
#[derive(Debug, PartialEq)]
pub enum LinkError {
    NotAScenarioLink,
    Damaged(&'static str),
    Invalid(ScenarioError),
}

impl std::fmt::Display for LinkError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LinkError::NotAScenarioLink => write!(f, "the link holds no scenario"),
            LinkError::Damaged(why) => write!(
                f,
                "the shared link is damaged ({why}); ask for it again, copied whole"
            ),
            LinkError::Invalid(e) => write!(f, "the shared scenario is not valid: {e}"),
        }
    }
}

/// The scenario in a URL fragment (with or without the leading `#`).
pub fn decode_fragment(fragment: &str) -> Result<Scenario, LinkError> {
    let body = fragment.trim_start_matches('#');
    let Some(data) = body.strip_prefix(FRAGMENT_KEY) else {
        return Err(LinkError::NotAScenarioLink);
    };
    let packed = URL_SAFE_NO_PAD
        .decode(data.trim())
        .map_err(|_| LinkError::Damaged("not base64url"))?;
    let json = miniz_oxide::inflate::decompress_to_vec_zlib_with_limit(&packed, MAX_INFLATED)
        .map_err(|_| LinkError::Damaged("does not inflate"))?;
    let text = String::from_utf8(json).map_err(|_| LinkError::Damaged("not UTF-8 text"))?;
    let scenario = Scenario::from_json(&text).map_err(LinkError::Invalid)?;
    scenario.validate().map_err(LinkError::Invalid)?;
    Ok(scenario)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::examples::EXAMPLES;

    #[test]
    fn every_example_round_trips_through_a_link() {
        for e in EXAMPLES {
            let s = e.scenario().unwrap();
            let fragment = encode_fragment(&s);
            assert!(fragment.len() < MAX_LINK_CHARS);
            assert_eq!(decode_fragment(&format!("#{fragment}")).unwrap(), s);
        }
    }

    #[test]
    fn damaged_links_say_what_is_wrong() {
        assert_eq!(decode_fragment(""), Err(LinkError::NotAScenarioLink));
        assert_eq!(decode_fragment("#top"), Err(LinkError::NotAScenarioLink));
        assert_eq!(
            decode_fragment("#s=%%%"),
            Err(LinkError::Damaged("not base64url"))
        );
        assert_eq!(
            decode_fragment("#s=AAAA"),
            Err(LinkError::Damaged("does not inflate"))
        );
        let good = encode_fragment(&EXAMPLES[0].scenario().unwrap());
        let cut = &good[..good.len() / 2];
        assert!(matches!(decode_fragment(cut), Err(LinkError::Damaged(_))));
        // Valid compression of something that is not a scenario.
        let junk = format!(
            "s={}",
            URL_SAFE_NO_PAD.encode(miniz_oxide::deflate::compress_to_vec_zlib(
                b"{\"model\": 3}",
                6
            ))
        );
        assert!(matches!(decode_fragment(&junk), Err(LinkError::Invalid(_))));
    }
}
