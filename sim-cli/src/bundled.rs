//! The example scenarios bundled into the binary (from `scenarios/`), so
//! `chopwave demo` works from any directory.

/// One bundled scenario file.
#[derive(Debug, Clone, Copy)]
pub struct Bundled {
    /// File name in `scenarios/`.
    pub file: &'static str,
    /// The file's JSON text.
    pub json: &'static str,
}

impl Bundled {
    /// The file name without `.json`.
    pub fn stem(&self) -> String {
        self.file.trim_end_matches(".json").to_string()
    }
}

macro_rules! bundle {
    ($($file:literal),* $(,)?) => {
        &[$(Bundled { file: $file, json: include_str!(concat!("../../scenarios/", $file)) }),*]
    };
}

/// Every bundled scenario, in the order the demo runs them.
pub const SCENARIOS: &[Bundled] = bundle!(
    "headlamp-4cell.json",
    "grow-light-48v.json",
    "cabin-light-9-32v.json",
    "undersized-inductor-dcm.json",
    "cove-light-fixed-duty.json",
    "tube-325v-bus.json",
);

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_bundled_scenario_validates_and_is_named_after_its_file() {
        for b in SCENARIOS {
            let s = sim_core::Scenario::from_json_str(b.json)
                .unwrap_or_else(|e| panic!("{}: {e}", b.file));
            assert_eq!(s.name, b.stem(), "{}", b.file);
            assert!(s.description.contains("llustrative"), "{}", b.file);
        }
    }
}
