//! The validated design: typed, in SI units, every range checked. The engine reads
//! only this; the YAML shape lives in [`super::load`].

/// A value read from the record, with where it was written.
#[derive(Clone, Debug, PartialEq)]
pub struct Given {
    /// SI value.
    pub value: f64,
    /// Dotted key path in the record.
    pub key: String,
    pub line: usize,
}

/// A calendar date as written in the record (`2026-11-30`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
}

impl std::fmt::Display for Date {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct RevisionEntry {
    pub rev: String,
    pub date: Date,
    pub by: String,
    pub change: String,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Project {
    pub id: String,
    pub title: String,
    pub revision: String,
    pub date: Date,
    pub prepared_by: String,
    /// Markdown.
    pub description: String,
    pub revisions: Vec<RevisionEntry>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SourceKind {
    Fixed,
}

#[derive(Clone, Debug, PartialEq)]
pub struct DcSource {
    pub kind: SourceKind,
    pub v_min: Given,
    pub v_nominal: Given,
    pub v_max: Given,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Connection {
    Standalone,
    Grid,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Output {
    /// RMS, line-to-neutral for single phase.
    pub voltage: Given,
    pub frequency: Given,
    /// Rated real power.
    pub power: Given,
    /// Of the rated load, lagging; 1 is resistive.
    pub power_factor: Given,
    pub connection: Connection,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Topology {
    HalfBridge,
    FullBridge,
}

impl Topology {
    pub fn name(self) -> &'static str {
        match self {
            Topology::HalfBridge => "half-bridge",
            Topology::FullBridge => "full-bridge",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Pwm {
    /// Two-level: the output swings between +V and -V (full-bridge) or +V/2 and -V/2.
    Bipolar,
    /// Three-level full-bridge: two legs with opposite references.
    Unipolar,
}

impl Pwm {
    pub fn name(self) -> &'static str {
        match self {
            Pwm::Bipolar => "bipolar",
            Pwm::Unipolar => "unipolar",
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Bridge {
    pub topology: Topology,
    pub pwm: Pwm,
    pub switching_frequency: Given,
    pub carrier_peak: Option<Given>,
}

/// How the filter's L and C are obtained.
#[derive(Clone, Debug, PartialEq)]
pub enum FilterSizing {
    /// Both values written in the record.
    Given {
        inductance: Given,
        capacitance: Given,
    },
    /// Sized by rule: f0 = k f1 and Z0 = 2 zeta R at the heaviest rated load.
    Rule {
        resonance_ratio: Given,
        damping: Given,
    },
}

#[derive(Clone, Debug, PartialEq)]
pub struct Filter {
    pub sizing: FilterSizing,
}

/// Design limits; each either written in the record or a stated common-practice default.
#[derive(Clone, Debug, PartialEq)]
pub struct Limits {
    pub max_modulation_index: Limit,
    pub min_resonance_ratio: Limit,
    pub max_resonance_fraction: Limit,
    pub max_gain_deviation: Limit,
    pub min_light_load_damping: Limit,
    pub light_load: Limit,
}

/// One limit and where it comes from.
#[derive(Clone, Debug, PartialEq)]
pub struct Limit {
    pub value: f64,
    /// `Some` when the record sets it; `None` for the default.
    pub given: Option<Given>,
    /// Why the default is what it is (shown as common practice).
    pub default_basis: &'static str,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Assumption {
    pub id: String,
    pub text: String,
    pub line: usize,
}

/// One input as written, for the package's inputs table.
#[derive(Clone, Debug, PartialEq)]
pub struct InputLine {
    pub key: String,
    pub text: String,
    pub line: usize,
}

/// A whole validated design record.
#[derive(Clone, Debug, PartialEq)]
pub struct Design {
    pub format: u32,
    pub project: Project,
    pub source: DcSource,
    pub output: Output,
    pub bridge: Bridge,
    pub filter: Filter,
    pub limits: Limits,
    pub assumptions: Vec<Assumption>,
    /// Markdown.
    pub notes: String,
    /// Every value as written, in record order.
    pub inputs: Vec<InputLine>,
}
