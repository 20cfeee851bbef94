//! What each stage is and what each part is in its stage, as types: synthesis records them
//! where it creates the parts, and every reader (the schematic, the reports, the rules that
//! look for a particular part) asks for a role instead of reading node names or purposes.
//!
//! A [`StageKind`] says which block a stage forms in the signal path; a [`PartRole`] says
//! what a part does inside its stage (the bench's parts have roles too: the sensor's model,
//! the rails, the converter's load). A part with no role was built by hand outside
//! synthesis; readers leave it to their fallback.

use serde::Serialize;

/// What a stage is: the block it forms in the signal path.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum StageKind {
    /// A current loop's shunt.
    LoopShunt,
    /// A high-impedance sensor's follower with its bias path.
    Follower,
    /// A photodiode's transimpedance amplifier with its bias.
    Transimpedance,
    /// An instrumentation amplifier's input stage: input amplifiers, R_F, R_G and the legs'
    /// protection resistors.
    InstrumentationInput,
    /// The input network in front of the gain stage: AC coupling and the bias after it.
    InputNetwork,
    /// A reference voltage or a level shift taken from a rail.
    Reference,
    /// The single-ended gain stage: gain and level shift in one amplifier, inverting or not.
    Gain { inverting: bool },
    /// The first of two gain stages (non-inverting), in front of the gain stage.
    FirstGain,
    /// A differential pair's difference amplifier.
    Difference,
    /// The anti-alias filter; each part's role names its section.
    Filter,
    /// The converter drive: isolation resistor, charge bucket, clamp.
    ConverterDrive,
    /// The supply decoupling: each amplifier's local capacitors and each rail's bulk
    /// capacitor, off the signal path.
    SupplyDecoupling,
}

/// A supply rail: the positive one, or the negative one of split rails.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RailSide {
    Positive,
    Negative,
}

/// One leg of a differential pair: the + leg (the pair's first terminal) or the − leg.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Side {
    Plus,
    Minus,
}

/// A part of one anti-alias filter section.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SectionPart {
    /// The input resistor (a first-order section's only resistor).
    R1,
    /// Sallen-Key: R2 to the + input; multiple feedback: the feedback resistor R2.
    R2,
    /// Multiple feedback: R3 to the − input.
    R3,
    /// The feedback capacitor C_f.
    Cf,
    /// The capacitor to ground C_g.
    Cg,
    /// The section's amplifier.
    Amplifier,
}

/// What a part is in its stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PartRole {
    /// The stage's amplifier: gain stage, follower, transimpedance or difference amplifier.
    Amplifier,
    /// An instrumentation amplifier's input amplifier (or follower) on one leg.
    InputAmplifier(Side),
    /// The follower that drives a reference node from its divider.
    ReferenceFollower,
    /// The resistor from the signal into the + input (the top of the + input's divider; R3
    /// of a difference amplifier).
    PlusInput,
    /// The input resistor into the − input, setting the gain with the feedback resistor (R1
    /// of a difference amplifier).
    MinusInput,
    /// The feedback resistor from the output to the − input (R_f, R2).
    FeedbackResistor,
    /// The feedback capacitor across it (a transimpedance stage's C_f).
    FeedbackCapacitor,
    /// A leg from an amplifier input to ground (the + divider's lower leg, the gain-setting
    /// resistor to ground).
    GroundLeg,
    /// A leg from an amplifier input to a rail: an offset folded into the input network.
    OffsetLeg,
    /// AC coupling's gain-setting resistor R_g, in series with [`PartRole::DcBlock`].
    GainSetting,
    /// The capacitor under R_g that makes the DC gain one.
    DcBlock,
    /// A difference amplifier's R4, from the + input to the reference pin.
    ToReference,
    /// The coupling capacitor that blocks the sensor's DC level.
    CouplingCapacitor,
    /// The series resistor after the coupling capacitor (attenuates with the bias resistor).
    Attenuator,
    /// A bias resistor holding an input at a reference (AC coupling's, a follower's R_b).
    Bias,
    /// A divider's upper leg, from a rail (reference, bias or return divider).
    DividerTop,
    /// A divider's lower leg, to ground.
    DividerBottom,
    /// The bypass capacitor across a divider's lower leg.
    Bypass,
    /// A leg's protection resistor in front of an instrumentation amplifier's input.
    Protection(Side),
    /// An instrumentation amplifier's first-stage feedback R_F on one leg.
    LegFeedback(Side),
    /// The gain resistor R_G between the input amplifiers' − inputs.
    GainResistor,
    /// A current loop's shunt.
    Shunt,
    /// A part of anti-alias filter section `section` (from 1, in signal order).
    Section { section: u32, part: SectionPart },
    /// The filter's first-order pole built into the gain stage: a capacitor across the
    /// feedback resistor.
    FeedbackPole,
    /// The same pole as a capacitor from the + input to ground.
    InputPole,
    /// The drive's series resistor to the converter pin.
    DriveResistor,
    /// The charge bucket at the converter pin.
    ChargeBucket,
    /// The clamp diode at the converter pin.
    Clamp,
    /// The local ceramic capacitor at amplifier U`amplifier`'s supply pin on `rail`.
    LocalDecoupling { amplifier: u32, rail: RailSide },
    /// The bulk capacitor of one rail.
    BulkDecoupling(RailSide),
    /// Bench: a single-ended sensor's EMF.
    Emf,
    /// Bench: a differential pair's EMF between its legs.
    DifferentialEmf,
    /// Bench: the pair's common-mode source under its − leg.
    CommonMode,
    /// Bench: a single-ended sensor's source resistance (or leakage), from the EMF to the
    /// sensor terminal.
    SourceResistance,
    /// Bench: one leg's impedance, from the pair's EMF to that leg's terminal.
    LegImpedance(Side),
    /// Bench: a capacitance the signal sits behind, from the EMF to the terminal.
    SeriesCapacitance,
    /// Bench: a capacitance from the sensor terminal to the return (cable, junction).
    ShuntCapacitance,
    /// Bench: a current loop's current into the terminal.
    LoopCurrent,
    /// Bench: a photodiode's photocurrent out of the terminal.
    Photocurrent,
    /// Bench: a photodiode's dark current beside it.
    DarkCurrent,
    /// Bench: a bridge's excitation.
    Excitation,
    /// Bench: the bridge's load on its excitation.
    BridgeLoad,
    /// Bench: a supply rail.
    Rail,
    /// Bench: the converter's input load.
    ConverterLoad,
    /// Bench: the converter's reference, brought out as a pin the levels are taken from.
    ConverterReference,
}

impl PartRole {
    /// A supply decoupling capacitor (local or bulk): from a rail to ground, it moves no
    /// signal figure (the rails are ideal sources in every analysis).
    pub fn is_decoupling(self) -> bool {
        matches!(self, PartRole::LocalDecoupling { .. } | PartRole::BulkDecoupling(_))
    }
}

/// Where a part goes when it is built: its stage and, from synthesis, its role there.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Place {
    pub stage: super::StageRole,
    pub role: Option<PartRole>,
}

/// A part built by hand: its stage, no role.
impl From<super::StageRole> for Place {
    fn from(stage: super::StageRole) -> Place {
        Place { stage, role: None }
    }
}

/// A part synthesis builds: its stage and its role there.
impl From<(super::StageRole, PartRole)> for Place {
    fn from((stage, role): (super::StageRole, PartRole)) -> Place {
        Place { stage, role: Some(role) }
    }
}
