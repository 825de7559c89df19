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

/// The DC source and how its voltage window is obtained.
#[derive(Clone, Debug, PartialEq)]
pub enum DcSource {
    /// The window written in the record.
    Fixed {
        v_min: Given,
        v_nominal: Given,
        v_max: Given,
    },
    Battery(Battery),
    PvString(Box<PvString>),
}

/// A battery: its open-circuit voltage at empty and at full charge, and its internal
/// resistance, which lowers the terminal voltage under load.
#[derive(Clone, Debug, PartialEq)]
pub struct Battery {
    pub empty: Given,
    pub full: Given,
    /// Open-circuit voltage taken as nominal; the midpoint of empty and full if absent.
    pub nominal: Option<Given>,
    pub internal_resistance: Given,
}

/// A PV array of equal strings: its modules at standard test conditions, their
/// temperature coefficients and the site's design temperatures.
#[derive(Clone, Debug, PartialEq)]
pub struct PvString {
    pub modules_in_series: Given,
    pub strings_in_parallel: Given,
    pub voc: Given,
    pub vmp: Given,
    pub isc: Given,
    pub imp: Given,
    /// Relative change of Voc per kelvin (negative).
    pub voc_coefficient: Given,
    /// Relative change of Vmp per kelvin (negative).
    pub vmp_coefficient: Given,
    /// The site's record-low ambient temperature (the coldest morning).
    pub record_low: Given,
    /// The site's high design ambient temperature.
    pub design_high: Given,
    /// Cell temperature above ambient in full sun.
    pub cell_rise: Given,
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
    /// Inductance of the grid behind the point of connection (grid only): the stiff
    /// source sits behind it, so it adds to the harmonic impedance but not to the
    /// fundamental, which is given at the point of connection.
    pub grid_inductance: Option<Given>,
}

impl Output {
    pub fn grid(&self) -> bool {
        self.connection == Connection::Grid
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Topology {
    HalfBridge,
    FullBridge,
    /// Two-level three-phase bridge; the output voltage is given line-to-line.
    ThreePhase,
}

impl Topology {
    pub fn name(self) -> &'static str {
        match self {
            Topology::HalfBridge => "half-bridge",
            Topology::FullBridge => "full-bridge",
            Topology::ThreePhase => "three-phase",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Pwm {
    /// Two-level: the output swings between +V and -V (full-bridge) or +V/2 and -V/2.
    Bipolar,
    /// Three-level full-bridge: two legs with opposite references.
    Unipolar,
    /// Three-phase: one sinusoidal reference per leg, 120 degrees apart.
    SineTriangle,
    /// Three-phase: each reference with a sixth of third harmonic added, which raises
    /// the linear range to m_a = 2/sqrt(3).
    ThirdHarmonic,
}

impl Pwm {
    pub fn name(self) -> &'static str {
        match self {
            Pwm::Bipolar => "bipolar",
            Pwm::Unipolar => "unipolar",
            Pwm::SineTriangle => "sine-triangle",
            Pwm::ThirdHarmonic => "third-harmonic",
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

/// The output filter's circuit.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FilterKind {
    /// One series inductor (grid-connected only).
    L,
    /// Series inductor, capacitor across the output (stand-alone).
    Lc,
    /// Inverter-side inductor, capacitor (optionally with a series damping resistor),
    /// grid-side inductor (grid-connected).
    Lcl,
}

impl FilterKind {
    pub fn name(self) -> &'static str {
        match self {
            FilterKind::L => "l",
            FilterKind::Lc => "lc",
            FilterKind::Lcl => "lcl",
        }
    }
}

/// Component values written in the record.
#[derive(Clone, Debug, PartialEq)]
pub struct FilterValues {
    /// The inductor at the switch node (`inductance`, or `inverter_side_inductance`).
    pub inductance: Given,
    pub capacitance: Option<Given>,
    /// LCL: the inductor between capacitor and grid.
    pub grid_side_inductance: Option<Given>,
    /// LCL: a resistor in series with the capacitor (passive damping).
    pub damping_resistance: Option<Given>,
}

/// How the filter's values are obtained.
#[derive(Clone, Debug, PartialEq)]
pub enum FilterSizing {
    /// Values written in the record.
    Given(FilterValues),
    /// LC sized by rule: f0 = k f1 and Z0 = 2 zeta R at the heaviest rated load.
    Rule {
        resonance_ratio: Given,
        damping: Given,
    },
    /// LCL sized by the published guideline (capacitor reactive power, inverter-side
    /// ripple, grid-side attenuation of the ripple).
    LclRule(LclRule),
}

#[derive(Clone, Debug, PartialEq)]
pub struct LclRule {
    /// Capacitor reactive power at f1 as a fraction of rated power.
    pub capacitor_fraction: Given,
    /// Largest inverter-side ripple (peak-to-peak) as a fraction of rated peak current.
    pub ripple_fraction: Given,
    /// Switching-frequency ripple reaching the grid as a fraction of that in the
    /// inverter-side inductor.
    pub attenuation: Given,
    /// Size a series damping resistor as well.
    pub damping_resistor: bool,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Filter {
    pub kind: FilterKind,
    pub sizing: FilterSizing,
}

/// How far the switching spectrum is computed.
#[derive(Clone, Debug, PartialEq)]
pub struct SpectrumSettings {
    /// Highest harmonic order; `None` for the default (5.5 m_f).
    pub max_order: Option<Given>,
}

/// A power semiconductor as its datasheet gives it; every value entered by the user.
#[derive(Clone, Debug, PartialEq)]
pub struct Device {
    /// The name it is known by in the record or its library.
    pub name: String,
    /// Where its data was written: `None` inline in the record, else the library file
    /// as the record names it.
    pub library: Option<String>,
    pub kind: DeviceKind,
    /// Blocking voltage rating (V_CES or V_DSS).
    pub voltage_rating: Given,
    /// Continuous current rating at the datasheet's case temperature.
    pub current_rating: Given,
    /// Turn-on and turn-off energy of the switch at the reference point.
    pub e_on: Given,
    pub e_off: Given,
    /// Reverse-recovery energy of the antiparallel or body diode at the reference point.
    pub e_rec: Given,
    pub reference_voltage: Given,
    pub reference_current: Given,
    /// Diode forward threshold and slope resistance.
    pub diode_v_f0: Given,
    pub diode_r_f: Given,
    /// Junction-to-case thermal resistances of the switch and of its diode.
    pub r_th_jc_switch: Given,
    pub r_th_jc_diode: Given,
    pub t_j_max: Given,
    /// Current fall time at turn-off, for the overshoot of a stray inductance.
    pub fall_time: Option<Given>,
}

#[derive(Clone, Debug, PartialEq)]
pub enum DeviceKind {
    /// IGBT with antiparallel diode: on-state threshold and slope resistance.
    Igbt { v_ce0: Given, r_ce: Given },
    /// MOSFET conducting in both directions (synchronous), its body diode in the dead
    /// time: on-resistance at 25 degC and its relative rise per kelvin.
    Mosfet {
        r_ds_on: Given,
        r_ds_on_coefficient: Given,
    },
}

/// How the overshoot at turn-off is obtained.
#[derive(Clone, Debug, PartialEq)]
pub enum Overshoot {
    /// A margin on the DC maximum, as a fraction.
    Margin(Given),
    /// The commutation loop's stray inductance, with the device's fall time.
    StrayInductance(Given),
}

/// The bridge's switches: every position of every leg carries the same device.
#[derive(Clone, Debug, PartialEq)]
pub struct Switches {
    pub device: Device,
    pub overshoot: Overshoot,
    /// Dead time between the two switches of a leg.
    pub dead_time: Option<Given>,
}

/// The thermal path of the bridge: each switch with its diode in one package on one
/// shared heatsink.
#[derive(Clone, Debug, PartialEq)]
pub struct Thermal {
    /// The highest ambient (air at the heatsink's inlet).
    pub ambient_max: Given,
    /// Case to heatsink, per package (interface material).
    pub r_th_cs: Given,
    /// Heatsink to ambient, for the whole heatsink.
    pub r_th_sa: Given,
}

/// The DC-link capacitor bank.
#[derive(Clone, Debug, PartialEq)]
pub struct DcLink {
    /// The bank across the DC bus; for a half-bridge, each of the two split halves.
    pub capacitance: Given,
    /// Equivalent series resistance of the bank (each half for a half-bridge).
    pub esr: Given,
    /// Voltage rating of the bank (of each half for a half-bridge).
    pub voltage_rating: Given,
    /// Hot spot to ambient, for the bank.
    pub r_th_ha: Given,
    /// Rated life at the rated hot-spot temperature (datasheet).
    pub rated_life: Given,
    pub rated_temperature: Given,
    /// Resistance across the whole DC bus that discharges it.
    pub bleeder: Given,
}

/// Losses beside the semiconductors' and the DC link's.
#[derive(Clone, Debug, PartialEq)]
pub struct OtherLosses {
    /// Series resistance of each filter inductor (winding, per phase).
    pub inductor_resistance: Option<Given>,
    /// Control, gate drive, fans and measurement: taken as constant.
    pub auxiliary_power: Option<Given>,
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
    /// Highest DC voltage the system and its equipment are rated for (PV strings).
    pub max_system_voltage: Limit,
    /// Largest inverter-side ripple as a fraction of the rated peak current.
    pub max_ripple_fraction: Limit,
    /// Stand-alone output voltage distortion; `None` takes IEEE Std 519-2014 Table 1
    /// for the output voltage.
    pub max_voltage_thd: Option<Given>,
    pub max_voltage_harmonic: Option<Given>,
    /// Peak blocking voltage as a fraction of the device rating.
    pub max_voltage_utilisation: Limit,
    /// Peak device current as a fraction of its continuous rating.
    pub max_current_utilisation: Limit,
    /// Least distance of the hottest junction below its maximum.
    pub min_junction_margin: Limit,
    /// Least expected DC-link capacitor life.
    pub min_capacitor_life: Limit,
    /// DC voltage taken as safe to touch once the bus has discharged.
    pub safe_touch_voltage: Limit,
    /// Longest time the bleeder may take to bring the bus to that voltage.
    pub max_discharge_time: Limit,
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
    pub spectrum: SpectrumSettings,
    pub switches: Option<Switches>,
    pub thermal: Option<Thermal>,
    pub dc_link: Option<DcLink>,
    pub losses: OtherLosses,
    pub limits: Limits,
    pub assumptions: Vec<Assumption>,
    /// Markdown.
    pub notes: String,
    /// Every value as written, in record order.
    pub inputs: Vec<InputLine>,
}
