//! The arguments the command line parses by hand (clap parses the rest):
//! quasi-extinction levels, fit bounds and sweep shards. A library module
//! so the fuzzer reaches them (fuzz/fuzz_targets/cli_args.rs); each returns
//! a message naming its option, never panics.

use std::collections::BTreeMap;

use anyhow::{bail, Result};
use tussock_core::sweep::map::Shard;

/// `--quasi-extinction`: a level per species, "none" for no level.
pub fn quasi_levels(given: &Option<Vec<String>>) -> Result<Option<[Option<f64>; 2]>> {
    let Some(given) = given else {
        return Ok(None);
    };
    if given.is_empty() || given.len() > 2 {
        bail!("--quasi-extinction: give one level per species (\"none\" for no level)");
    }
    let mut levels = [None; 2];
    for (i, text) in given.iter().enumerate() {
        let text = text.trim();
        if text != "none" {
            let v: f64 = text
                .parse()
                .map_err(|_| anyhow::anyhow!("--quasi-extinction: not a number: {text:?}"))?;
            levels[i] = Some(v);
        }
    }
    Ok(Some(levels))
}

/// `--bounds`: name=lower:upper items.
pub fn bounds(items: &[String]) -> Result<BTreeMap<String, (f64, f64)>> {
    let mut out = BTreeMap::new();
    for item in items.iter().filter(|s| !s.trim().is_empty()) {
        let parsed = item.split_once('=').and_then(|(name, range)| {
            let (lo, hi) = range.split_once(':')?;
            Some((
                name.trim().to_string(),
                lo.trim().parse::<f64>().ok()?,
                hi.trim().parse::<f64>().ok()?,
            ))
        });
        let Some((name, lo, hi)) = parsed else {
            bail!("--bounds: \"{item}\" is not of the form name=lower:upper (e.g. r=0.01:5)");
        };
        if out.insert(name.clone(), (lo, hi)).is_some() {
            bail!("--bounds: {name} is given twice");
        }
    }
    Ok(out)
}

/// `--shard`: i/n.
pub fn shard(text: &str) -> Result<Shard> {
    let parsed = text
        .split_once('/')
        .and_then(|(i, n)| Some((i.trim().parse().ok()?, n.trim().parse().ok()?)));
    match parsed {
        Some((index, count)) => Ok(Shard { index, count }),
        None => bail!("--shard: expected i/n such as 2/8, got {text}"),
    }
}

#[cfg(test)]
mod tests {
    use super::{bounds, quasi_levels, shard};

    fn strings(items: &[&str]) -> Vec<String> {
        items.iter().map(|s| s.to_string()).collect()
    }

    #[test]
    fn good_forms_are_read() {
        assert_eq!(
            quasi_levels(&Some(strings(&["none", " 5 "]))).unwrap(),
            Some([None, Some(5.0)])
        );
        assert_eq!(quasi_levels(&None).unwrap(), None);
        let b = bounds(&strings(&["r=0.01:5", " K = 10 : 1e4 ", ""])).unwrap();
        assert_eq!(b["r"], (0.01, 5.0));
        assert_eq!(b["K"], (10.0, 1e4));
        let s = shard(" 2 / 8").unwrap();
        assert_eq!((s.index, s.count), (2, 8));
    }

    #[test]
    fn bad_forms_name_their_option() {
        for (result, option) in [
            (
                quasi_levels(&Some(strings(&["x"]))).map(|_| ()),
                "--quasi-extinction:",
            ),
            (
                quasi_levels(&Some(strings(&["1", "2", "3"]))).map(|_| ()),
                "--quasi-extinction:",
            ),
            (bounds(&strings(&["r=1"])).map(|_| ()), "--bounds:"),
            (
                bounds(&strings(&["r=1:2", "r=3:4"])).map(|_| ()),
                "--bounds:",
            ),
            (shard("3").map(|_| ()), "--shard:"),
            (shard("-1/2").map(|_| ()), "--shard:"),
        ] {
            let message = result.unwrap_err().to_string();
            assert!(message.starts_with(option), "{message}");
        }
    }
}
