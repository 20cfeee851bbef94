//! What the page shows for one request, all from engine calls: the design, the annotated
//! schematic, the part list and the share-link fragment. The downloads are made on
//! demand from the same design, with the same calls as the `rangefit` command.

use rangefit_engine::analysis::AnalysisConfig;
use rangefit_engine::bom::{self, BomRow};
use rangefit_engine::design::design_with;
use rangefit_engine::draw::plot::{self, PlotConfig};
use rangefit_engine::draw::schematic::{self, SchematicConfig};
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::report;
use rangefit_engine::{design, share, Design, Request};

/// The engine's answer for one request and everything drawn from it.
#[derive(Debug, Clone)]
pub struct Shown {
    pub design: Design,
    /// The schematic SVG (escaped by the engine), when the design has a circuit.
    pub schematic: Option<String>,
    pub bom: Vec<BomRow>,
    /// The share-link fragment (everything after `#`).
    pub fragment: String,
    /// Counts designs shown, so plots drawn later find the design they belong to.
    pub serial: u64,
    /// The design was made without its Monte Carlo spread, which is being computed.
    pub spread_pending: bool,
}

/// One analysis plot.
#[derive(Debug, Clone, PartialEq)]
pub struct ShownPlot {
    /// Stable name, used in `data-testid="plot-<id>"`.
    pub id: &'static str,
    pub title: &'static str,
    pub svg: Option<String>,
}

/// Runs the engine's design for `req` (the part worth timing on its own).
pub fn run_design(req: &Request) -> Design {
    design(req)
}

/// The same design without the Monte Carlo spread (the worst case over tolerances is
/// still computed): what a page load shows first. Freshly loaded WebAssembly runs its
/// first calls unoptimised, and the 10,000 builds of the spread would hold the first
/// paint back by tens of milliseconds; the full design follows right after.
pub fn run_design_quick(req: &Request) -> Design {
    design_with(req, &AnalysisConfig { monte_carlo_runs: 0, ..AnalysisConfig::from_request(req) })
}

/// Draws what the design view opens with from a finished design: schematic, part list
/// and share link. The plots are drawn separately by [`plots`], after the first paint.
pub fn derive(design: Design, serial: u64, spread_pending: bool) -> Shown {
    let schematic = schematic::of_design(&design, &SchematicConfig::default()).map(|s| s.svg);
    let bom = bom::bom(&design);
    let fragment = share::encode(&design.request);
    Shown { design, schematic, bom, fragment, serial, spread_pending }
}

/// The four analysis plots of a design, in page order.
pub fn plots(design: &Design) -> Vec<ShownPlot> {
    let cfg = PlotConfig::default();
    [
        ("response", "Frequency response", plot::response as fn(&Design, &PlotConfig) -> Option<plot::Plot>),
        ("transfer", "Transfer: sensor to converter input", plot::transfer),
        ("tolerance", "Spread over part tolerances (Monte Carlo)", plot::tolerance),
        ("noise", "Noise against one LSB", plot::noise),
    ]
    .into_iter()
    .map(|(id, title, draw)| ShownPlot { id, title, svg: draw(design, &cfg).map(|p| p.svg) })
    .collect()
}

/// A file the user can download.
#[derive(Debug, Clone, PartialEq)]
pub struct Download {
    pub file_name: String,
    pub mime: &'static str,
    pub content: String,
}

/// What can be downloaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Export {
    Schematic,
    PartList,
    Netlist,
    Report,
}

impl Export {
    pub const ALL: [Export; 4] = [Export::Schematic, Export::PartList, Export::Netlist, Export::Report];

    pub fn label(self) -> &'static str {
        match self {
            Export::Schematic => "Schematic (SVG)",
            Export::PartList => "Part list (CSV)",
            Export::Netlist => "SPICE3 netlist with testbench",
            Export::Report => "Printable report (HTML)",
        }
    }

    pub fn id(self) -> &'static str {
        match self {
            Export::Schematic => "schematic",
            Export::PartList => "part-list",
            Export::Netlist => "netlist",
            Export::Report => "report",
        }
    }
}

/// A file name made of the design name: ASCII letters, digits and dashes only.
pub fn file_stem(name: &str) -> String {
    let mut stem = String::new();
    for c in name.chars() {
        if c.is_ascii_alphanumeric() {
            stem.push(c.to_ascii_lowercase());
        } else if !stem.ends_with('-') && !stem.is_empty() {
            stem.push('-');
        }
    }
    let stem = stem.trim_end_matches('-');
    let stem: String = stem.chars().take(60).collect();
    if stem.is_empty() {
        "rangefit-design".into()
    } else {
        stem
    }
}

/// The file for `export`, or `None` when the design has nothing to export (no circuit; the
/// report is always there and says why).
pub fn download(shown: &Shown, export: Export) -> Option<Download> {
    let d = &shown.design;
    let stem = file_stem(&d.name);
    match export {
        Export::Schematic => shown.schematic.as_ref().map(|svg| Download {
            file_name: format!("{stem}-schematic.svg"),
            mime: "image/svg+xml",
            content: svg.clone(),
        }),
        Export::PartList => d.circuit.as_ref().map(|_| Download {
            file_name: format!("{stem}-parts.csv"),
            mime: "text/csv",
            content: bom::to_csv(&shown.bom),
        }),
        Export::Netlist => d.circuit.as_ref().map(|c| Download {
            file_name: format!("{stem}.cir"),
            mime: "text/plain",
            content: netlist(&d.request, c, NetlistConfig { testbench: true }),
        }),
        Export::Report => {
            Some(Download { file_name: format!("{stem}-report.html"), mime: "text/html", content: report::report(d) })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rangefit_engine::{cli, demos};

    fn cli_out(args: &[&str], json: &str) -> String {
        let args: Vec<String> = args.iter().map(|s| s.to_string()).collect();
        let text = json.to_string();
        let out = cli::run(&args, &move |_| Ok(text.clone()));
        assert_eq!(out.status, 0, "{}", out.stderr);
        out.stdout
    }

    #[test]
    fn downloads_equal_what_the_command_prints() {
        for demo in demos::ALL {
            let req = Request::from_json(demo.json).expect("valid");
            let shown = derive(run_design(&req), 1, false);
            assert!(shown.schematic.as_deref().is_some_and(|s| s.starts_with("<svg")), "{}", demo.id);
            let drawn = plots(&shown.design);
            assert_eq!(drawn.iter().map(|p| p.id).collect::<Vec<_>>(), ["response", "transfer", "tolerance", "noise"]);
            assert!(drawn.iter().all(|p| p.svg.as_deref().is_some_and(|s| s.starts_with("<svg"))), "{}", demo.id);
            let csv = download(&shown, Export::PartList).expect("part list");
            assert_eq!(csv.content, cli_out(&["bom", "-"], demo.json), "{}", demo.id);
            let net = download(&shown, Export::Netlist).expect("netlist");
            assert_eq!(net.content, cli_out(&["netlist", "--testbench", "-"], demo.json), "{}", demo.id);
            let svg = download(&shown, Export::Schematic).expect("schematic");
            assert_eq!(svg.content, cli_out(&["schematic", "-"], demo.json), "{}", demo.id);
            let html = download(&shown, Export::Report).expect("report");
            assert_eq!(html.content, cli_out(&["report", "-"], demo.json), "{}", demo.id);
            assert_eq!(format!("{}\n", shown.fragment), cli_out(&["link", "-"], demo.json), "{}", demo.id);
        }
    }

    #[test]
    fn file_names_are_tame() {
        assert_eq!(file_stem("Harbour hydrophone tap"), "harbour-hydrophone-tap");
        assert_eq!(file_stem("<img src=x onerror=alert(1)>"), "img-src-x-onerror-alert-1");
        assert_eq!(file_stem("../../etc"), "etc");
        assert_eq!(file_stem("   "), "rangefit-design");
    }

    #[test]
    fn a_design_without_circuit_has_no_files() {
        let mut json: serde_json::Value = serde_json::from_str(demos::ALL[1].json).expect("JSON");
        json["source"]["max"] = json["source"]["min"].clone();
        let req = Request::from_value(&json).expect("well formed");
        let shown = derive(run_design(&req), 1, false);
        assert!(shown.design.circuit.is_none());
        for e in [Export::Schematic, Export::PartList, Export::Netlist] {
            assert_eq!(download(&shown, e), None);
        }
        let report = download(&shown, Export::Report).expect("the report says why there is no circuit");
        assert!(report.content.contains("<html"), "a report document");
    }
}
