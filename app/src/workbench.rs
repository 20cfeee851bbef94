//! The editing state behind the page: the request text, the last design the engine
//! produced from a valid request, and the problem with the current text, if any.
//!
//! Kept free of Leptos so its rules can be tested on the host: an invalid request
//! never replaces the last valid design, and a valid one always clears the problem.

use rangefit_engine::{design, Design, Request};

pub struct Workbench {
    text: String,
    design: Option<Design>,
    problem: Option<String>,
    /// Counts designs produced, so views can re-render only when the design changes.
    revision: u64,
}

impl Workbench {
    pub fn new(text: &str) -> Workbench {
        let mut bench = Workbench { text: String::new(), design: None, problem: None, revision: 0 };
        bench.edit(text);
        bench
    }

    /// Takes new request text and redesigns when it is a valid request.
    pub fn edit(&mut self, text: &str) {
        self.text = text.to_owned();
        match Request::from_json(text) {
            Ok(request) => {
                self.design = Some(design(&request));
                self.problem = None;
                self.revision += 1;
            }
            Err(error) => self.problem = Some(error.to_string()),
        }
    }

    pub fn text(&self) -> &str {
        &self.text
    }

    pub fn design(&self) -> Option<&Design> {
        self.design.as_ref()
    }

    pub fn problem(&self) -> Option<&str> {
        self.problem.as_deref()
    }

    pub fn revision(&self) -> u64 {
        self.revision
    }

    /// True when the design on show belongs to an earlier text, not the current one.
    pub fn is_stale(&self) -> bool {
        self.problem.is_some() && self.design.is_some()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rangefit_engine::demos;

    #[test]
    fn every_demo_is_a_valid_request_with_parts() {
        for demo in demos::ALL {
            let bench = Workbench::new(demo.json);
            assert_eq!(bench.problem(), None, "demo {}", demo.id);
            let design = bench.design().unwrap_or_else(|| panic!("demo {} has a design", demo.id));
            assert!(!design.parts.is_empty(), "demo {} lists parts", demo.id);
            assert!(!bench.is_stale());
        }
    }

    #[test]
    fn bad_text_keeps_the_last_design_and_reports_the_problem() {
        let demo = &demos::ALL[0];
        let mut bench = Workbench::new(demo.json);
        let name = bench.design().expect("first demo designs").name.clone();
        let parts = bench.design().expect("first demo designs").parts.len();
        let revision = bench.revision();

        bench.edit("{\"sensor\": ");
        assert_eq!(bench.text(), "{\"sensor\": ");
        let problem = bench.problem().expect("broken JSON is reported");
        assert!(!problem.trim().is_empty());
        assert!(bench.is_stale());
        assert_eq!(bench.revision(), revision, "no new design from a bad request");
        let kept = bench.design().expect("last design kept");
        assert_eq!(kept.name, name);
        assert_eq!(kept.parts.len(), parts);

        bench.edit(demo.json);
        assert_eq!(bench.problem(), None, "a valid request clears the problem");
        assert!(!bench.is_stale());
        assert_eq!(bench.revision(), revision + 1);
    }

    #[test]
    fn bad_text_before_any_design_shows_only_the_problem() {
        let bench = Workbench::new("not a request");
        assert!(bench.design().is_none());
        assert!(bench.problem().is_some());
        assert!(!bench.is_stale());
        assert_eq!(bench.revision(), 0);
    }
}
