//! The page's shared state: the signals every component reads (`Ctx`), where the design on
//! show came from (`Meta`), the notices at the top of the page, what the user asked to open
//! (`Open`), and the helpers several components share: which step a request path belongs
//! to, moving between steps, and counting checks.

use std::sync::Arc;

use leptos::prelude::*;
use rangefit_engine::diag::{Check, Severity};
use rangefit_engine::Request;
use serde_json::Value;

use crate::browser;
use crate::field_table::{self, FIELDS};
use crate::fields::{Step, Values};
use crate::form_load;
use crate::form_read::{self, Validation};
use crate::outputs::{Shown, ShownPlot};
use crate::store::{Problem, Saved};

/// Where the design being edited came from and what it was when opened or saved.
#[derive(Debug, Clone, PartialEq)]
pub struct Meta {
    /// The saved design it belongs to, if any.
    pub saved_id: Option<String>,
    /// The request JSON as last opened or saved.
    pub baseline: Value,
    /// Opened from a share link and not edited since: the stored working copy is left alone.
    pub from_link: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoticeKind {
    Info,
    Warning,
    Error,
}

/// A message at the top of the page.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    pub id: u64,
    pub kind: NoticeKind,
    pub text: String,
    /// `data-testid` of the notice, so tests can find a particular one.
    pub testid: &'static str,
    /// Offer to save the design on show (a design opened from a link).
    pub offer_save: bool,
}

/// Something the user asked to open.
#[derive(Debug, Clone, PartialEq)]
pub enum Open {
    New,
    Demo(usize),
    Saved(String),
    Link(Box<Request>),
}

/// The page's state; every member is a signal, so the whole is `Copy`.
#[derive(Clone, Copy)]
pub struct Ctx {
    /// One text per field of [`FIELDS`], same order.
    pub values: &'static [RwSignal<String>],
    pub step: RwSignal<Step>,
    pub validation: Memo<Validation>,
    /// The last design the engine produced from a complete request.
    pub shown: RwSignal<Option<Arc<Shown>>>,
    /// The plots of the design with that serial number, drawn after the first paint.
    pub plots: RwSignal<Option<(u64, Arc<Vec<ShownPlot>>)>>,
    pub meta: RwSignal<Meta>,
    pub dirty: Memo<bool>,
    pub saved: RwSignal<Vec<Saved>>,
    pub problems: RwSignal<Vec<Problem>>,
    pub notices: RwSignal<Vec<Notice>>,
    /// An open waiting for the user to decide about unsaved changes.
    pub pending: RwSignal<Option<Open>>,
    pub autosave_error: RwSignal<Option<String>>,
    pub sidebar_open: RwSignal<bool>,
    /// False until the first screen is painted: the steps not on show are built after it,
    /// so the first design appears sooner.
    pub ready: RwSignal<bool>,
    next_notice: RwSignal<u64>,
}

impl Ctx {
    /// The state of a page showing a new design, before anything is opened.
    pub fn new() -> Ctx {
        let initial = form_load::new_design();
        let values: &'static [RwSignal<String>] = Box::leak(
            FIELDS
                .iter()
                .map(|f| RwSignal::new(initial.get(f.path).cloned().unwrap_or_default()))
                .collect::<Vec<_>>()
                .into_boxed_slice(),
        );
        let validation = Memo::new(move |_| {
            // Inserted one by one: collecting into a BTreeMap sorts the pairs first, with a
            // copy of the standard sort of its own in the bundle (engine::order has the shared one).
            let mut texts = Values::new();
            for (f, s) in FIELDS.iter().zip(values.iter()) {
                texts.insert(f.path, s.get());
            }
            form_read::validate(&texts)
        });
        let meta = RwSignal::new(Meta { saved_id: None, baseline: Value::Null, from_link: false });
        let dirty = Memo::new(move |_| validation.with(|v| meta.with(|m| v.json != m.baseline)));
        Ctx {
            values,
            step: RwSignal::new(Step::Sensor),
            validation,
            shown: RwSignal::new(None),
            plots: RwSignal::new(None),
            meta,
            dirty,
            saved: RwSignal::new(Vec::new()),
            problems: RwSignal::new(Vec::new()),
            notices: RwSignal::new(Vec::new()),
            pending: RwSignal::new(None),
            autosave_error: RwSignal::new(None),
            sidebar_open: RwSignal::new(false),
            ready: RwSignal::new(false),
            next_notice: RwSignal::new(1),
        }
    }

    /// The text signal of the field at `path`.
    pub fn value(&self, path: &str) -> Option<RwSignal<String>> {
        field_table::index(path).and_then(|i| self.values.get(i).copied())
    }

    pub fn notify(&self, kind: NoticeKind, testid: &'static str, text: impl Into<String>) {
        let id = self.next_notice.get_untracked();
        self.next_notice.set(id + 1);
        let text = text.into();
        self.notices.update(|n| {
            n.retain(|x| x.testid != testid);
            n.push(Notice { id, kind, text, testid, offer_save: false });
        });
    }

    /// Shows the notice of a design opened from a link, with its offer to save the design,
    /// in place of any earlier notice about a link.
    pub fn notify_link(&self, text: String) {
        let id = self.next_notice.get_untracked();
        self.next_notice.set(id + 1);
        self.notices.update(|n| {
            n.retain(|x| x.testid != "notice-link" && x.testid != "notice-link-error");
            n.push(Notice { id, kind: NoticeKind::Info, text, testid: "notice-link", offer_save: true });
        });
    }

    pub fn dismiss(&self, testid: &str) {
        self.notices.update(|n| n.retain(|x| x.testid != testid));
    }

    /// Puts `values` in the form and starts a new working copy.
    pub fn load(&self, values: &Values, saved_id: Option<String>, from_link: bool) {
        let baseline = form_read::validate(values).json;
        for (f, s) in FIELDS.iter().zip(self.values.iter()) {
            let text = values.get(f.path).cloned().unwrap_or_default();
            if s.get_untracked() != text {
                s.set(text);
            }
        }
        self.meta.set(Meta { saved_id, baseline, from_link });
        self.shown.set(None);
        self.pending.set(None);
        if !from_link {
            self.dismiss("notice-link");
            browser::clear_fragment();
        }
    }

    /// The design step for a complete request, else the first step.
    pub fn show_first_step(&self) {
        let complete = self.validation.with_untracked(Validation::is_complete);
        self.step.set(if complete { Step::Design } else { Step::Sensor });
    }
}

/// Which step a request-error path belongs to.
pub fn step_of(path: &str) -> Step {
    field_table::field(path).map(|f| f.step).unwrap_or(Step::Sensor)
}

/// Whether `step` can be opened: the design step needs a design.
pub fn reachable(ctx: Ctx, step: Step) -> bool {
    step != Step::Design || ctx.shown.with(Option::is_some)
}

/// Moves to `step` and puts the keyboard focus on its tab.
pub fn go(ctx: Ctx, step: Step, focus_tab: bool) {
    if !reachable(ctx, step) {
        return;
    }
    ctx.step.set(step);
    if focus_tab {
        browser::focus(&format!("tab-{}", step.id()));
    }
}

/// The numbers of error and warning checks.
pub fn tally(checks: &[Check]) -> (usize, usize) {
    let count = |s| checks.iter().filter(|c| c.severity == s).count();
    (count(Severity::Error), count(Severity::Warning))
}

/// "1 warning", "3 warnings".
pub fn plural(n: usize, word: &str) -> String {
    if n == 1 {
        format!("1 {word}")
    } else {
        format!("{n} {word}s")
    }
}
