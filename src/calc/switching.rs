//! The switch-node spectrum at each DC operating point: the harmonic lines of the
//! bridge output voltage (line-to-line for three-phase), its THD and weighted THD, the
//! carrier sideband groups, and a cross-check of the analytic series against the
//! spectrum of the exact switching waveform.
//!
//! The spectrum comes from the analytic double Fourier series ([`spectrum::lines`])
//! where it holds (linear modulation, sine references, m_f >= 3), else from the FFT of
//! the waveform built from the solved crossings ([`spectrum::numerical_lines`]), which
//! also covers overmodulation, third-harmonic injection and non-integer m_f.

use super::modulation::{short, DC_POINTS};
use super::spectrum::{
    self, Line, Modulation, Pwm, SpectrumError, DEFAULT_SAMPLES_PER_PERIOD,
    MIN_ANALYTIC_CARRIER_RATIO,
};
use crate::record::{Design, Pwm as PwmKind, Topology};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::{format_number, Unit};

/// Lines below this fraction of V_dc/2 are left out of the sheet (they still count in
/// every distortion figure).
pub const SHEET_LINE_FLOOR: f64 = 0.01;

/// Largest difference allowed between the analytic and the numerical spectrum, per
/// unit of V_dc/2, at every line of a package's design (the acceptance figure;
/// the unit tests hold the methods to 1e-5 and better on their cases).
pub const CROSSCHECK_TOLERANCE: f64 = 1e-3;

/// Carrier groups reported one by one.
pub const GROUPS: u32 = 5;

/// Which spectrum method gave the lines.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    Analytic,
    Numerical,
}

impl Method {
    /// Lines at or below this amplitude (per unit of V_dc/2) are dropped: the series'
    /// exact zeros, or the FFT's residue, which its tests bound at about 1e-7 below
    /// order 200 (`spectrum::numerical`).
    pub fn noise_floor(self) -> f64 {
        match self {
            Method::Analytic => 1e-12,
            Method::Numerical => 1e-6,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Method::Analytic => "analytic",
            Method::Numerical => "numerical",
        }
    }
}

/// The spectrum of one DC operating point.
#[derive(Clone, Debug, PartialEq)]
pub struct PointSpectrum {
    /// `min`, `nominal` or `max`.
    pub key: &'static str,
    pub label: &'static str,
    pub pwm: Pwm,
    pub v_dc: f64,
    /// The sheet id of that DC voltage.
    pub dc_id: &'static str,
    pub method: Method,
    /// Lines per unit of V_dc/2, of the bridge output (v_ab for three-phase), sorted by
    /// order, without zero-amplitude lines.
    pub lines: Vec<Line>,
}

impl PointSpectrum {
    /// Volts per unit of the lines.
    pub fn scale(&self) -> f64 {
        self.v_dc / 2.0
    }

    /// The fundamental's amplitude in volts (peak), 0 if absent.
    pub fn fundamental(&self) -> f64 {
        self.lines
            .iter()
            .find(|l| (l.order - 1.0).abs() < 1e-9)
            .map_or(0.0, |l| l.amplitude * self.scale())
    }
}

/// The largest modulation index of linear modulation: 1, or 2/sqrt(3) with a sixth
/// of third harmonic injected (J. A. Houldsworth, D. A. Grant, IEEE Trans. Ind.
/// Appl., 1984, from memory).
pub fn linear_limit(d: &Design) -> f64 {
    match modulation_of(d) {
        Modulation::ThreePhaseThirdHarmonic => 2.0 / 3f64.sqrt(),
        _ => 1.0,
    }
}

/// The spectrum modulation of the design's bridge.
pub fn modulation_of(d: &Design) -> Modulation {
    match (d.bridge.topology, d.bridge.pwm) {
        (Topology::HalfBridge, _) => Modulation::HalfBridge,
        (Topology::FullBridge, PwmKind::Unipolar) => Modulation::FullBridgeUnipolar,
        (Topology::FullBridge, _) => Modulation::FullBridgeBipolar,
        (Topology::ThreePhase, PwmKind::ThirdHarmonic) => Modulation::ThreePhaseThirdHarmonic,
        (Topology::ThreePhase, _) => Modulation::ThreePhase,
    }
}

/// The voltage per unit of modulation index at the output of one phase, as a fraction
/// of V_dc: 1/2 for a half-bridge leg and for a three-phase leg against the load
/// neutral, 1 for a full bridge.
pub fn base_factor(d: &Design) -> f64 {
    match d.bridge.topology {
        Topology::FullBridge => 1.0,
        Topology::HalfBridge | Topology::ThreePhase => 0.5,
    }
}

/// How the bridge output maps onto the voltage across one phase of the filter: 1 for
/// single-phase, 1/sqrt(3) in magnitude for the line-to-line voltage of a balanced
/// three-wire three-phase bridge (v_aN = v_ab / sqrt(3) at -30 degrees for every
/// positive- or negative-sequence line; zero-sequence lines cancel in both).
pub fn phase_factor(d: &Design) -> f64 {
    match d.bridge.topology {
        Topology::ThreePhase => 1.0 / 3f64.sqrt(),
        _ => 1.0,
    }
}

pub fn pwm_of(d: &Design, m_a: f64, m_f: f64) -> Pwm {
    Pwm {
        modulation: modulation_of(d),
        m_a,
        m_f,
    }
}

/// Most fundamental periods of the window a non-repeating carrier ratio is moved to:
/// m_f becomes the nearest p / q with q up to this, so that the FFT window stays short.
pub const APPROXIMATION_PERIODS: u32 = 4;

/// A modulator whose carrier repeats within [`spectrum::MAX_PERIODS`] fundamental
/// periods, as the time-domain methods (waveform, FFT, ripple) need: `pwm` itself, or
/// the same with m_f moved to the nearest p / q, q <= [`APPROXIMATION_PERIODS`], with
/// `true` to say it was moved (by at most 1/8). The ripple changes with m_f only as
/// 1/m_f^2 (`ripple` tests), and a line of carrier group m moves by at most m/8 orders.
pub fn periodic(pwm: &Pwm) -> (Pwm, bool) {
    if spectrum::repeats(pwm.m_f) {
        return (*pwm, false);
    }
    let best = (1..=APPROXIMATION_PERIODS)
        .map(|q| {
            let q = f64::from(q);
            let p = (pwm.m_f * q).round().max(1.0);
            p / q
        })
        .fold(pwm.m_f.round().max(1.0), |a, x| {
            if (x - pwm.m_f).abs() < (a - pwm.m_f).abs() - 1e-12 {
                x
            } else {
                a
            }
        });
    (Pwm { m_f: best, ..*pwm }, true)
}

/// The highest order computed: the record's, else 5.5 m_f.
pub fn max_order(d: &Design, pwm: &Pwm) -> f64 {
    d.spectrum
        .max_order
        .as_ref()
        .map_or_else(|| pwm.default_max_order(), |g| g.value.floor())
}

/// Samples per period for the numerical spectrum: the default, doubled until the
/// highest order fits below a quarter of them.
fn samples_for(max_order: f64) -> usize {
    let mut n = DEFAULT_SAMPLES_PER_PERIOD;
    while (4.0 * max_order) as usize >= n && n < (1 << 22) {
        n *= 2;
    }
    n
}

fn numerical(pwm: &Pwm, max_order: f64) -> Result<Vec<Line>, SpectrumError> {
    spectrum::numerical_lines(pwm, max_order, samples_for(max_order))
}

fn analytic_applies(pwm: &Pwm) -> bool {
    pwm.m_a <= 1.0
        && pwm.m_f >= MIN_ANALYTIC_CARRIER_RATIO
        && pwm.modulation != Modulation::ThreePhaseThirdHarmonic
}

/// The spectra at the three DC points of an evaluated sheet (after modulation).
pub fn spectra(d: &Design, s: &Sheet) -> Result<Vec<PointSpectrum>, SpectrumError> {
    let m_f = s.value("modulation.m_f");
    DC_POINTS
        .iter()
        .map(|&(key, label, dc_id)| {
            let m_a = s.value(&format!("modulation.m_a.{key}"));
            let pwm = pwm_of(d, m_a, m_f);
            let top = max_order(d, &pwm);
            let (method, lines, pwm) = if analytic_applies(&pwm) {
                (Method::Analytic, spectrum::lines(&pwm, top)?, pwm)
            } else {
                // A carrier that never repeats has no finite FFT window: take the
                // nearest one that does (`periodic`), which the sheet warns about.
                let (near, _) = periodic(&pwm);
                (Method::Numerical, numerical(&near, top)?, near)
            };
            Ok(PointSpectrum {
                key,
                label,
                pwm,
                v_dc: s.value(dc_id),
                dc_id,
                method,
                lines: lines
                    .into_iter()
                    .filter(|l| l.amplitude > method.noise_floor() && l.order > 0.0)
                    .collect(),
            })
        })
        .collect()
}

/// Id fragment of an order: `h41`, or `h266_67` for a line between harmonics.
pub fn order_tag(order: f64) -> String {
    if (order - order.round()).abs() < 1e-9 {
        format!("h{}", order.round() as u64)
    } else {
        format!("h{}", format_number(order, 6).replace('.', "_"))
    }
}

/// Display text of an order: `41` or `266.67`.
pub fn order_text(order: f64) -> String {
    if (order - order.round()).abs() < 1e-9 {
        format!("{}", order.round() as u64)
    } else {
        format!("{order:.2}")
    }
}

fn dfs_source() -> Source {
    Source::reference(
        "H. S. Black, Modulation Theory, 1953; D. G. Holmes, T. A. Lipo, Pulse Width Modulation for Power Converters, 2003, chapter 3",
        "double Fourier series of naturally sampled sine-triangle PWM",
    )
}

fn fft_source() -> Source {
    Source::common_practice(
        "spectrum of the exact switching waveform (crossings solved to 1e-14 rad), by FFT of its box averages",
    )
}

pub fn evaluate(d: &Design, s: &mut Sheet) -> Vec<PointSpectrum> {
    let spectra = match spectra(d, s) {
        Ok(sp) => sp,
        Err(e) => {
            s.warn(
                "modulation.m_f",
                &format!("no switching spectrum was computed: {e}; output quality and harmonic compliance are not evaluated"),
            );
            return Vec::new();
        }
    };
    let m_f = s.value("modulation.m_f");
    if let Some(p) = spectra.iter().find(|p| (p.pwm.m_f - m_f).abs() > 1e-9) {
        s.warn(
            "modulation.m_f",
            &format!(
                "the carrier does not repeat within {} fundamental periods, so the numerical spectrum is taken at the nearest carrier ratio that does, m_f = {} instead of {}: each line of carrier group m sits within m/8 orders of where it belongs",
                spectrum::MAX_PERIODS,
                format_number(p.pwm.m_f, 6),
                format_number(m_f, 6)
            ),
        );
    }
    let what = if d.bridge.topology == Topology::ThreePhase {
        "line-to-line "
    } else {
        ""
    };
    for p in &spectra {
        let dc_id = p.dc_id;
        let dc_sym = s.symbol(dc_id);
        let tag = short(p.key);
        let m_id = format!("modulation.m_a.{}", p.key);
        let m_sym = s.symbol(&m_id);
        let source = match p.method {
            Method::Analytic => dfs_source(),
            Method::Numerical => fft_source(),
        };
        let inputs = [m_id.as_str(), "modulation.m_f", dc_id];
        let formula = |h: &str| format!("a_{h}({m_sym}, m_f) {dc_sym} / 2");
        let v1 = p.fundamental();
        let v1_id = format!("spectrum.switch.h1.{}", p.key);
        let v1_sym = format!("V_(\"sw\",1,\"{tag}\")");
        s.derive(
            &v1_id,
            &format!(
                "Switch-node {what}fundamental (peak), {}, {} method",
                p.label,
                p.method.name()
            ),
            &v1_sym,
            Unit::Volt,
        )
        .formula(&formula("1"))
        .inputs(&inputs)
        .source(source.clone())
        .value(v1);
        let floor = SHEET_LINE_FLOOR;
        for l in &p.lines {
            if (l.order - 1.0).abs() < 1e-9 || l.amplitude < floor {
                continue;
            }
            let o = order_text(l.order);
            s.derive(
                &format!("spectrum.switch.{}.{}", order_tag(l.order), p.key),
                &format!("Switch-node {what}harmonic {o} (peak), {}", p.label),
                &format!("V_(\"sw\",{},\"{tag}\")", o.replace('.', ",")),
                Unit::Volt,
            )
            .formula(&formula(&format!("({o})")))
            .inputs(&inputs)
            .source(source.clone())
            .value(l.amplitude * p.scale());
        }
        let a: Vec<(f64, f64)> = p
            .lines
            .iter()
            .map(|l| (l.order, l.amplitude * p.scale()))
            .collect();
        let (thd, wthd) = distortion(&a, v1);
        s.derive(
            &format!("spectrum.switch.thd.{}", p.key),
            &format!("Switch-node {what}THD, {}", p.label),
            &format!("\"THD\"_(\"sw\",\"{tag}\")"),
            Unit::Percent,
        )
        .formula(&format!("sqrt(sum_(h != 1) V_(\"sw\",h)^2) / {v1_sym}"))
        .inputs(&[&v1_id])
        .source(Source::reference(
            "IEC 61000-2-2",
            "THD as the rms of the harmonics over the rms of the fundamental (from memory); every computed line counts, interharmonics included",
        ))
        .value(thd);
        s.derive(
            &format!("spectrum.switch.wthd.{}", p.key),
            &format!("Switch-node {what}weighted THD, {}", p.label),
            &format!("\"WTHD\"_(\"sw\",\"{tag}\")"),
            Unit::Percent,
        )
        .formula(&format!("sqrt(sum_(h != 1) (V_(\"sw\",h) / h)^2) / {v1_sym}"))
        .inputs(&[&v1_id])
        .source(Source::common_practice(
            "weighted THD, each harmonic divided by its order as an inductive filter does (used so by Holmes and Lipo 2003, chapter 3; from memory)",
        ))
        .value(wthd);
        let m_f = p.pwm.m_f;
        for m in 1..=GROUPS {
            let lo = (f64::from(m) - 0.5) * m_f;
            let hi = (f64::from(m) + 0.5) * m_f;
            if lo > max_order(d, &p.pwm) {
                break;
            }
            let sum: f64 = a
                .iter()
                .filter(|(o, _)| *o > lo && *o <= hi)
                .map(|(_, v)| v * v)
                .sum();
            s.derive(
                &format!("spectrum.switch.group{m}.{}", p.key),
                &format!(
                    "Carrier group {m} ({}), root-sum-square of its lines, {}",
                    group_text(m),
                    p.label
                ),
                &format!("V_(\"grp\",{m},\"{tag}\")"),
                Unit::Volt,
            )
            .formula(&format!(
                "sqrt(sum_({m} m_f - m_f / 2 < h <= {m} m_f + m_f / 2) V_(\"sw\",h)^2)"
            ))
            .inputs(&["modulation.m_f"])
            .value(sum.sqrt());
        }
    }
    crosscheck(d, s, &spectra);
    regular_sampling(d, s, &spectra);
    spectra
}

/// What a digital modulator that samples the reference once per carrier period
/// (symmetric regular sampling, at the carrier minimum) would make at DC nominal: its
/// THD and the largest line below half the carrier ratio, which natural sampling does
/// not have. Shown beside the naturally sampled results the package is based on.
fn regular_sampling(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    let Some(p) = spectra
        .iter()
        .find(|p| p.key == "nominal" && p.method == Method::Analytic)
    else {
        return;
    };
    let Ok(lines) = spectrum::regular_lines(&p.pwm, max_order(d, &p.pwm)) else {
        return;
    };
    let source = || {
        Source::reference(
            "D. G. Holmes, T. A. Lipo, Pulse Width Modulation for Power Converters, 2003, chapter 3 (from memory)",
            "double Fourier series of symmetric regular-sampled PWM, phases derived for a sample at the carrier minimum and verified against the sampled waveform",
        )
    };
    let v: Vec<(f64, f64)> = lines
        .iter()
        .map(|l| (l.order, l.amplitude * p.scale()))
        .collect();
    let v1 = v
        .iter()
        .find(|(o, _)| (o - 1.0).abs() < 1e-9)
        .map_or(0.0, |(_, a)| *a);
    let (thd, _) = distortion(&v, v1);
    let inputs = ["modulation.m_a.nominal", "modulation.m_f", "dc.v_nominal"];
    let m_sym = s.symbol("modulation.m_a.nominal");
    let dc_sym = s.symbol("dc.v_nominal");
    s.derive(
        "spectrum.regular.thd.nominal",
        "Switch-node THD with symmetric regular sampling, DC nominal",
        "\"THD\"_(\"sw,reg\")",
        Unit::Percent,
    )
    .formula(&format!(
        "sqrt(sum_(h != 1) a_h^\"reg\"({m_sym}, m_f)^2) / a_1^\"reg\"({m_sym}, m_f)"
    ))
    .inputs(&inputs[..2])
    .source(source())
    .value(thd);
    let low = v
        .iter()
        .filter(|(o, _)| (o - 1.0).abs() > 1e-9 && *o < p.pwm.m_f / 2.0)
        .fold((0.0, 0.0), |a, &(o, x)| if x > a.1 { (o, x) } else { a });
    if low.1 > 0.0 {
        let o = order_text(low.0);
        s.derive(
            "spectrum.regular.baseband_max.nominal",
            &format!(
                "Largest low-order line with symmetric regular sampling (order {o}), DC nominal"
            ),
            "V_(\"sw,reg,low\")",
            Unit::Volt,
        )
        .formula(&format!(
            "max_(1 < h < m_f / 2) a_h^\"reg\"({m_sym}, m_f) {dc_sym} / 2"
        ))
        .inputs(&inputs)
        .source(source())
        .value(low.1);
    }
}

fn group_text(m: u32) -> String {
    if m == 1 {
        "about m_f".into()
    } else {
        format!("about {m} m_f")
    }
}

/// THD and weighted THD of (order, amplitude) lines against the fundamental `v1`.
pub fn distortion(lines: &[(f64, f64)], v1: f64) -> (f64, f64) {
    let mut sum = 0.0;
    let mut wsum = 0.0;
    for &(o, v) in lines {
        if (o - 1.0).abs() < 1e-9 || o <= 0.0 {
            continue;
        }
        sum += v * v;
        wsum += (v / o).powi(2);
    }
    (sum.sqrt() / v1, wsum.sqrt() / v1)
}

/// Where the analytic series was used, the numerical spectrum of the same point is
/// computed too and the worst difference of any line reported and checked.
fn crosscheck(d: &Design, s: &mut Sheet, spectra: &[PointSpectrum]) {
    let Some(p) = spectra
        .iter()
        .find(|p| p.key == "nominal" && p.method == Method::Analytic)
    else {
        return;
    };
    let top = max_order(d, &p.pwm);
    let num = match numerical(&p.pwm, top) {
        Ok(num) => num,
        Err(e) => {
            s.warn(
                "spectrum.switch.h1.nominal",
                &format!(
                    "the analytic spectrum was not cross-checked against the numerical one: {e}"
                ),
            );
            return;
        }
    };
    let worst = worst_difference(&p.lines, &num);
    s.derive(
        "spectrum.crosscheck.nominal",
        "Largest difference between analytic and numerical lines, DC nominal (per unit of V_dc/2)",
        "epsilon_\"spec\"",
        Unit::One,
    )
    .formula("max_h abs(underline(a)_h^\"DFS\" - underline(a)_h^\"FFT\")")
    .inputs(&[])
    .source(Source::common_practice(
        "the two methods are independent: the series from Bessel functions, the FFT from the solved switching instants",
    ))
    .value(worst);
    let basis = || {
        Source::common_practice(
            "1e-3 of V_dc/2 asked of the two methods at every line; the engine's own tests hold them to 1e-5 and better on their test cases",
        )
    };
    s.input(
        "spectrum.crosscheck_tolerance",
        "Agreement asked of the two spectrum methods (per unit of V_dc/2)",
        "epsilon_\"max\"",
        CROSSCHECK_TOLERANCE,
        Unit::One,
        basis(),
    );
    s.check(
        "check.spectrum.crosscheck",
        "The analytic and numerical switch-node spectra agree",
        "spectrum.crosscheck.nominal",
        Relation::AtMost,
        CROSSCHECK_TOLERANCE,
        basis(),
    );
}

/// The largest phasor difference between two sets of lines, matched by order.
fn worst_difference(a: &[Line], b: &[Line]) -> f64 {
    use num_complex::Complex64;
    use std::collections::BTreeMap;
    let key = |o: f64| (o * 1e6).round() as i64;
    let mut by: BTreeMap<i64, (Complex64, Complex64)> = BTreeMap::new();
    for l in a {
        by.entry(key(l.order)).or_default().0 += Complex64::from_polar(l.amplitude, l.phase);
    }
    for l in b {
        if l.order > 0.0 {
            by.entry(key(l.order)).or_default().1 += Complex64::from_polar(l.amplitude, l.phase);
        }
    }
    by.values().map(|(x, y)| (x - y).norm()).fold(0.0, f64::max)
}
