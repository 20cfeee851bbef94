//! Demo requests of our own scenarios, shipped with the engine so the app, the command line
//! and the tests share them.

/// One demo request.
#[derive(Debug, Clone, Copy)]
pub struct Demo {
    /// Stable identifier (file stem under `engine/demos/`).
    pub id: &'static str,
    pub title: &'static str,
    /// The request as JSON.
    pub json: &'static str,
}

/// Every demo, the first one being the design the app opens with.
pub const ALL: &[Demo] = &[
    Demo {
        id: "harbour-hydrophone",
        title: "Harbour hydrophone into a 3.3 V converter",
        json: include_str!("../demos/harbour-hydrophone.json"),
    },
    Demo {
        id: "boiler-pressure",
        title: "Boiler-loop pressure sensor, 0.5–4.5 V into 3.3 V",
        json: include_str!("../demos/boiler-pressure.json"),
    },
    Demo {
        id: "mast-tilt",
        title: "Weather-mast tilt sensor, ±2 V into 0–5 V on one rail",
        json: include_str!("../demos/mast-tilt.json"),
    },
    Demo {
        id: "water-tank",
        title: "Rainwater tank level on a 4–20 mA loop",
        json: include_str!("../demos/water-tank.json"),
    },
    Demo {
        id: "greenhouse-ph",
        title: "Greenhouse pH electrode (500 MΩ), ±2.5 V board into 0–2.5 V",
        json: include_str!("../demos/greenhouse-ph.json"),
    },
    Demo {
        id: "greenhouse-light",
        title: "Greenhouse light logger: photodiode into 3.3 V",
        json: include_str!("../demos/greenhouse-light.json"),
    },
    Demo {
        id: "beehive-scale",
        title: "Beehive scale: 2 mV/V load-cell bridge on 3.3 V",
        json: include_str!("../demos/beehive-scale.json"),
    },
    Demo {
        id: "polytunnel-airflow",
        title: "Polytunnel airflow: ±2 V differential pair into 3.3 V",
        json: include_str!("../demos/polytunnel-airflow.json"),
    },
    Demo {
        id: "workshop-shunt",
        title: "Bench-supply monitor, ±10 V into ±5 V",
        json: include_str!("../demos/workshop-shunt.json"),
    },
];

/// The demo with identifier `id`.
pub fn find(id: &str) -> Option<&'static Demo> {
    ALL.iter().find(|d| d.id == id)
}
