//! Demo scenarios, invented for illustration, one per kind of user. The
//! scenario files live in `examples/` so the CLI can run them too.

use tussock_core::Scenario;

pub struct Example {
    pub title: &'static str,
    pub description: &'static str,
    pub json: &'static str,
}

pub static EXAMPLES: &[Example] = &[
    Example {
        title: "Greenhouse biocontrol: spider mites and predatory mites",
        description: "An invented cucumber house. Two-spotted spider mites (per leaf) grow fast; a predatory mite is released at one per leaf. \
            Each predator kills up to ten pest mites a day (handling time 0.1 day). Does the predator hold the pest down, and does it settle or boom and bust? \
            Densities are per leaf, time in days. Values are illustrative, not measured.",
        json: include_str!("../../examples/greenhouse-mites.json"),
    },
    Example {
        title: "Greenhouse: three predator releases and a spray",
        description: "The same invented cucumber house, planted clean: spider mites arrive at 5 per leaf, predatory mites are released at 0.5 per leaf \
            on days 7, 14 and 21, and a selective spray on day 40 removes half the pest. The economic threshold is 10 mites per leaf and the injury level 20. \
            When is the pest above the threshold, and does it stay below to day 90? Values are illustrative, not measured.",
        json: include_str!("../../examples/greenhouse-release.json"),
    },
    Example {
        title: "Reserve: will a reintroduced predator persist?",
        description: "An invented reserve where 12 martens are released among a vole population near its carrying capacity. \
            Will the predator establish, and at what prey density will the pair settle? Densities are whole-reserve counts, time in years. \
            A deterministic model says nothing about chance losses of a small founder group.",
        json: include_str!("../../examples/reserve-reintroduction.json"),
    },
    Example {
        title: "Lab microcosm: two competing algae",
        description: "An invented flask experiment with a green alga and a diatom started at equal, low densities (cells per mL, in thousands). \
            Which one is excluded, and how long until the loser is rare? Competition coefficients are illustrative.",
        json: include_str!("../../examples/microcosm-competition.json"),
    },
];

impl Example {
    pub fn scenario(&self) -> Option<Scenario> {
        Scenario::from_json(self.json).ok()
    }
}

#[cfg(test)]
mod tests {
    use super::EXAMPLES;

    #[test]
    fn every_example_is_a_valid_scenario() {
        for e in EXAMPLES {
            let s = e
                .scenario()
                .unwrap_or_else(|| panic!("{} does not parse", e.title));
            s.validate()
                .unwrap_or_else(|err| panic!("{}: {err}", e.title));
        }
    }
}
