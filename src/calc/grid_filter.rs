//! The filter of a grid-connected bridge, `l` or `lcl`: component values (given or
//! sized by the LCL guideline), the resonance, the fundamental phasors from the grid
//! current back to the switch node, and the admittances that carry each switching
//! harmonic to the inverter-side inductor, the capacitor and the grid.
//!
//! Circuit of one phase: switch node, inverter-side inductor L1, then (LCL) a shunt
//! branch of C in series with an optional damping resistor R_d, then the grid-side
//! inductor L2, the point of connection, the grid inductance L_g and a stiff
//! sinusoidal grid source. At the fundamental the grid voltage is given at the point
//! of connection, so L_g does not enter; at a switching harmonic the grid source is a
//! short circuit behind L_g (the grid is taken as free of harmonics, assumption E8).

use super::given;
use super::operating_point::phase_voltage;
use crate::record::{Design, FilterKind, FilterSizing};
use crate::sheet::{Relation, Sheet, Source};
use crate::units::Unit;
use num_complex::Complex64;
use std::f64::consts::PI;

/// The per-phase filter between switch node and grid source.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GridFilter {
    /// Inverter-side inductance, H.
    pub l1: f64,
    /// Shunt capacitance, F; `None` for an L filter.
    pub c: Option<f64>,
    /// Damping resistance in series with C, ohm (0 for none).
    pub r_d: f64,
    /// Grid-side filter inductance, H (0 for an L filter).
    pub l2: f64,
    /// Grid inductance behind the point of connection, H.
    pub l_grid: f64,
}

/// Currents per volt of switch-node voltage at one frequency (admittances, siemens).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Admittances {
    pub inverter: Complex64,
    pub capacitor: Complex64,
    pub grid: Complex64,
}

impl GridFilter {
    /// The same filter without its damping resistor, for the plots' comparison.
    pub fn undamped(&self) -> GridFilter {
        GridFilter { r_d: 0.0, ..*self }
    }

    /// Everything between the capacitor and the grid source.
    fn grid_side(&self) -> f64 {
        self.l2 + self.l_grid
    }

    /// The admittances at frequency `f` (above 0) with the grid source shorted.
    pub fn admittances(&self, f: f64) -> Admittances {
        let w = 2.0 * PI * f;
        let j = Complex64::i();
        let z1 = j * w * self.l1;
        let z2 = j * w * self.grid_side();
        match self.c {
            None => {
                let y = 1.0 / (z1 + z2);
                Admittances {
                    inverter: y,
                    capacitor: Complex64::new(0.0, 0.0),
                    grid: y,
                }
            }
            // A capacitor straight across a stiff source carries no switching current:
            // the switch-node lines drive the grid through L1 alone.
            Some(_) if self.grid_side() == 0.0 => {
                let y = 1.0 / z1;
                Admittances {
                    inverter: y,
                    capacitor: Complex64::new(0.0, 0.0),
                    grid: y,
                }
            }
            Some(c) => {
                let zc = self.r_d + 1.0 / (j * w * c);
                let z_par = zc * z2 / (zc + z2);
                let i1 = 1.0 / (z1 + z_par);
                let v_c = 1.0 - z1 * i1;
                Admittances {
                    inverter: i1,
                    capacitor: v_c / zc,
                    grid: v_c / z2,
                }
            }
        }
    }

    /// Resonance of the undamped LCL: the frequency at which the inverter-side and
    /// grid-side inductances in parallel resonate with C,
    /// f_res = (1 / 2 pi) sqrt((L1 + L2') / (L1 L2' C)), L2' = L2 + L_g (circuit
    /// theory; the form used by Liserre, Blaabjerg and Hansen, IEEE Trans. Ind. Appl.,
    /// 2005, from memory). `None` for an L filter.
    pub fn resonance(&self) -> Option<f64> {
        let c = self.c?;
        let l2 = self.grid_side();
        (l2 > 0.0).then(|| ((self.l1 + l2) / (self.l1 * l2 * c)).sqrt() / (2.0 * PI))
    }
}

/// The filter of an evaluated sheet (grid-connected).
pub fn grid_filter_of(s: &Sheet) -> GridFilter {
    let get = |id: &str| s.get(id).map_or(0.0, |q| q.value);
    GridFilter {
        l1: s.value("filter.inductance"),
        c: s.get("filter.capacitance").map(|q| q.value),
        r_d: get("filter.damping_resistance"),
        l2: get("filter.grid_side_inductance"),
        l_grid: get("grid.inductance"),
    }
}

pub(crate) fn liserre() -> &'static str {
    "M. Liserre, F. Blaabjerg, S. Hansen, Design and control of an LCL-filter-based three-phase active rectifier, IEEE Trans. Ind. Appl. 41(5), 2005 (from memory)"
}

pub fn evaluate(d: &Design, s: &mut Sheet) {
    match &d.output.grid_inductance {
        Some(g) => {
            given(
                s,
                "grid.inductance",
                "Grid inductance behind the connection point",
                "L_g",
                g,
                Unit::Henry,
            );
        }
        None => {
            s.input(
                "grid.inductance",
                "Grid inductance behind the connection point",
                "L_g",
                0.0,
                Unit::Henry,
                Source::Assumption { id: "E8".into() },
            );
        }
    }
    let lcl = d.filter.kind == FilterKind::Lcl;
    let l1_name = if d.filter.kind != FilterKind::L {
        "Inverter-side inductance"
    } else {
        "Filter inductance"
    };
    let l1_sym = if d.filter.kind == FilterKind::L {
        "L"
    } else {
        "L_1"
    };
    match &d.filter.sizing {
        FilterSizing::Given(v) => {
            given(
                s,
                "filter.inductance",
                l1_name,
                l1_sym,
                &v.inductance,
                Unit::Henry,
            );
            if let Some(c) = &v.capacitance {
                given(
                    s,
                    "filter.capacitance",
                    "Filter capacitance",
                    "C_f",
                    c,
                    Unit::Farad,
                );
            }
            if let Some(l2) = &v.grid_side_inductance {
                given(
                    s,
                    "filter.grid_side_inductance",
                    "Grid-side inductance",
                    "L_2",
                    l2,
                    Unit::Henry,
                );
            }
            if let Some(r) = &v.damping_resistance {
                given(
                    s,
                    "filter.damping_resistance",
                    "Damping resistance (in series with C_f)",
                    "R_d",
                    r,
                    Unit::Ohm,
                );
            }
        }
        FilterSizing::LclRule(rule) => super::lcl_design::size_lcl(d, s, rule),
        // The record reader keeps LC rules away from grid-connected filters.
        FilterSizing::Rule { .. } => return,
    }
    let gf = grid_filter_of(s);
    if gf.c.is_some() {
        let (formula, inputs): (&str, &[&str]) = if lcl {
            (
                "L_2 + L_g",
                &["filter.grid_side_inductance", "grid.inductance"],
            )
        } else {
            ("L_g", &["grid.inductance"])
        };
        s.derive(
            "filter.l2_total",
            if lcl {
                "Grid-side inductance with the grid's"
            } else {
                "Inductance between capacitor and grid source (the grid's)"
            },
            "L_2'",
            Unit::Henry,
        )
        .formula(formula)
        .inputs(inputs)
        .value(gf.grid_side());
        if gf.grid_side() > 0.0 {
            let f_res = s
                .derive(
                    "filter.f_res",
                    if lcl {
                        "LCL resonance frequency"
                    } else {
                        "Resonance of the filter with the grid inductance"
                    },
                    "f_\"res\"",
                    Unit::Hertz,
                )
                .formula("1 / (2 pi) sqrt((L_1 + L_2') / (L_1 L_2' C_f))")
                .inputs(&["filter.inductance", "filter.l2_total", "filter.capacitance"])
                .source(Source::reference(
                    liserre(),
                    "section II, resonance of the LCL filter",
                ))
                .value(gf.resonance().unwrap_or(f64::NAN));
            resonance_checks(d, s, f_res);
        } else {
            s.warn(
                "filter.capacitance",
                "the filter capacitor sits straight across a stiff grid (no grid-side or grid inductance is stated): it draws only reactive current at f1 and filters nothing; state the grid inductance, or use an `lcl` or `l` filter",
            );
        }
    }
    fundamental(d, s, &gf);
}

fn resonance_checks(d: &Design, s: &mut Sheet, f_res: f64) {
    let l = &d.limits;
    let f1 = s.value("output.f1");
    let f_sw = s.value("bridge.f_sw");
    s.derive(
        "filter.f_res_ratio",
        "Resonance ratio f_res/f1",
        "f_\"res\" / f_1",
        Unit::One,
    )
    .formula("f_\"res\" / f_1")
    .inputs(&["filter.f_res", "output.f1"])
    .value(f_res / f1);
    let k_min = super::limit_quantity(
        s,
        "limits.min_resonance_ratio",
        "Minimum resonance ratio",
        "k_(0,\"min\")",
        &l.min_resonance_ratio,
        Unit::One,
    );
    let source = match &l.min_resonance_ratio.given {
        Some(_) => super::limit_source(&l.min_resonance_ratio),
        None => Source::reference(
            liserre(),
            "section III: resonance above ten times the grid frequency",
        ),
    };
    s.check(
        "check.filter.resonance_above_f1",
        "The LCL resonance lies well above the grid frequency",
        "filter.f_res_ratio",
        Relation::AtLeast,
        k_min,
        source,
    );
    s.derive(
        "filter.f_res_fraction",
        "Resonance as a fraction of f_sw",
        "f_\"res\" / f_\"sw\"",
        Unit::One,
    )
    .formula("f_\"res\" / f_\"sw\"")
    .inputs(&["filter.f_res", "bridge.f_sw"])
    .value(f_res / f_sw);
    let frac = super::limit_quantity(
        s,
        "limits.max_resonance_fraction",
        "Maximum resonance fraction of f_sw",
        "r_(0,\"max\")",
        &l.max_resonance_fraction,
        Unit::One,
    );
    let source = match &l.max_resonance_fraction.given {
        Some(_) => super::limit_source(&l.max_resonance_fraction),
        None => Source::reference(
            liserre(),
            "section III: resonance below half the switching frequency",
        ),
    };
    s.check(
        "check.filter.resonance_below_fsw",
        "The LCL resonance lies below half the switching frequency",
        "filter.f_res_fraction",
        Relation::AtMost,
        frac,
        source,
    );
}

/// The fundamental phasors, peak values, with the voltage at the point of connection
/// as the reference: the grid current, the capacitor voltage and current (LCL), the
/// inverter-side current and the switch-node voltage the bridge must make.
fn fundamental(d: &Design, s: &mut Sheet, gf: &GridFilter) {
    let (v_id, v_sym) = phase_voltage(d);
    let _ = v_sym;
    let v_pk = s.value("output.v_peak");
    let i_pk = s.value("output.i_peak");
    let pf = s.value("output.power_factor");
    let w1 = s.value("output.omega1");
    let _ = v_id;
    let sin_phi = (1.0 - pf * pf).max(0.0).sqrt();
    let basis = Source::Assumption { id: "E9".into() };
    let i_re = s
        .derive(
            "grid.i_re",
            "Grid current, in-phase part (peak)",
            "I_(g,\"re\")",
            Unit::Ampere,
        )
        .formula("I_(o,\"pk\") lambda")
        .inputs(&["output.i_peak", "output.power_factor"])
        .source(basis.clone())
        .value(i_pk * pf);
    let i_im = s
        .derive(
            "grid.i_im",
            "Grid current, quadrature part (peak)",
            "I_(g,\"im\")",
            Unit::Ampere,
        )
        .formula("-I_(o,\"pk\") sqrt(1 - lambda^2)")
        .inputs(&["output.i_peak", "output.power_factor"])
        .source(basis)
        .value(-i_pk * sin_phi);
    // Voltage and current at the node before L1: the capacitor (LCL) or the point of
    // connection (L).
    let (
        node_re_id,
        node_im_id,
        node_re_sym,
        node_im_sym,
        i1_re_id,
        i1_im_id,
        i1_re_sym,
        i1_im_sym,
        node_re,
        node_im,
        i1_re,
        i1_im,
    );
    if let Some(c) = gf.c {
        let l2 = gf.l2;
        let has_l2 = s.get("filter.grid_side_inductance").is_some();
        let (re_f, re_in, im_f, im_in): (&str, &[&str], &str, &[&str]) = if has_l2 {
            (
                "V_(o,\"pk\") - omega_1 L_2 I_(g,\"im\")",
                &[
                    "output.v_peak",
                    "output.omega1",
                    "filter.grid_side_inductance",
                    "grid.i_im",
                ],
                "omega_1 L_2 I_(g,\"re\")",
                &["output.omega1", "filter.grid_side_inductance", "grid.i_re"],
            )
        } else {
            // LC on the grid: the capacitor sits at the connection point itself.
            ("V_(o,\"pk\")", &["output.v_peak"], "0", &[])
        };
        let v_c_re = s
            .derive(
                "filter.v_c_re",
                "Capacitor voltage, in-phase part (peak)",
                "V_(C,\"re\")",
                Unit::Volt,
            )
            .formula(re_f)
            .inputs(re_in)
            .value(v_pk - w1 * l2 * i_im);
        let v_c_im = s
            .derive(
                "filter.v_c_im",
                "Capacitor voltage, quadrature part (peak)",
                "V_(C,\"im\")",
                Unit::Volt,
            )
            .formula(im_f)
            .inputs(im_in)
            .value(w1 * l2 * i_re);
        // Y_C = 1 / (R_d + 1 / (j omega C)) = G + j B.
        let wcr = w1 * c * gf.r_d;
        let b = s
            .derive(
                "filter.b_c",
                "Capacitor branch susceptance at f1",
                "B_C",
                Unit::Siemens,
            )
            .formula(if gf.r_d > 0.0 {
                "omega_1 C_f / (1 + (omega_1 C_f R_d)^2)"
            } else {
                "omega_1 C_f"
            })
            .inputs(if gf.r_d > 0.0 {
                &[
                    "output.omega1",
                    "filter.capacitance",
                    "filter.damping_resistance",
                ]
            } else {
                &["output.omega1", "filter.capacitance"]
            })
            .value(w1 * c / (1.0 + wcr * wcr));
        let g = if gf.r_d > 0.0 {
            s.derive(
                "filter.g_c",
                "Capacitor branch conductance at f1",
                "G_C",
                Unit::Siemens,
            )
            .formula("(omega_1 C_f)^2 R_d / (1 + (omega_1 C_f R_d)^2)")
            .inputs(&[
                "output.omega1",
                "filter.capacitance",
                "filter.damping_resistance",
            ])
            .value((w1 * c).powi(2) * gf.r_d / (1.0 + wcr * wcr))
        } else {
            0.0
        };
        let (ic_re_f, ic_im_f) = if gf.r_d > 0.0 {
            (
                "G_C V_(C,\"re\") - B_C V_(C,\"im\")",
                "G_C V_(C,\"im\") + B_C V_(C,\"re\")",
            )
        } else {
            ("-B_C V_(C,\"im\")", "B_C V_(C,\"re\")")
        };
        let ic_inputs: &[&str] = if gf.r_d > 0.0 {
            &["filter.g_c", "filter.b_c", "filter.v_c_re", "filter.v_c_im"]
        } else {
            &["filter.b_c", "filter.v_c_re", "filter.v_c_im"]
        };
        let ic_re = s
            .derive(
                "filter.i_c_re",
                "Capacitor current at f1, in-phase part (peak)",
                "I_(C,\"re\")",
                Unit::Ampere,
            )
            .formula(ic_re_f)
            .inputs(ic_inputs)
            .value(g * v_c_re - b * v_c_im);
        let ic_im = s
            .derive(
                "filter.i_c_im",
                "Capacitor current at f1, quadrature part (peak)",
                "I_(C,\"im\")",
                Unit::Ampere,
            )
            .formula(ic_im_f)
            .inputs(ic_inputs)
            .value(g * v_c_im + b * v_c_re);
        s.derive(
            "filter.i_c_f1",
            "Capacitor current at f1 (rms)",
            "I_(C,1)",
            Unit::Ampere,
        )
        .formula("sqrt(I_(C,\"re\")^2 + I_(C,\"im\")^2) / sqrt(2)")
        .inputs(&["filter.i_c_re", "filter.i_c_im"])
        .value(ic_re.hypot(ic_im) / 2f64.sqrt());
        let a = s
            .derive(
                "filter.i_1_re",
                "Inverter-side current, in-phase part (peak)",
                "I_(1,\"re\")",
                Unit::Ampere,
            )
            .formula("I_(g,\"re\") + I_(C,\"re\")")
            .inputs(&["grid.i_re", "filter.i_c_re"])
            .value(i_re + ic_re);
        let bq = s
            .derive(
                "filter.i_1_im",
                "Inverter-side current, quadrature part (peak)",
                "I_(1,\"im\")",
                Unit::Ampere,
            )
            .formula("I_(g,\"im\") + I_(C,\"im\")")
            .inputs(&["grid.i_im", "filter.i_c_im"])
            .value(i_im + ic_im);
        node_re_id = "filter.v_c_re";
        node_im_id = "filter.v_c_im";
        node_re_sym = "V_(C,\"re\")";
        node_im_sym = "V_(C,\"im\")";
        i1_re_id = "filter.i_1_re";
        i1_im_id = "filter.i_1_im";
        i1_re_sym = "I_(1,\"re\")";
        i1_im_sym = "I_(1,\"im\")";
        node_re = v_c_re;
        node_im = v_c_im;
        i1_re = a;
        i1_im = bq;
    } else {
        node_re_id = "output.v_peak";
        node_im_id = "";
        node_re_sym = "V_(o,\"pk\")";
        node_im_sym = "";
        i1_re_id = "grid.i_re";
        i1_im_id = "grid.i_im";
        i1_re_sym = "I_(g,\"re\")";
        i1_im_sym = "I_(g,\"im\")";
        node_re = v_pk;
        node_im = 0.0;
        i1_re = i_re;
        i1_im = i_im;
    }
    let l_sym = if gf.c.is_some() { "L_1" } else { "L" };
    s.derive(
        "filter.i_l_f1",
        "Inverter-side inductor current at f1 (rms)",
        "I_(L,1)",
        Unit::Ampere,
    )
    .formula(&format!("sqrt({i1_re_sym}^2 + {i1_im_sym}^2) / sqrt(2)"))
    .inputs(&[i1_re_id, i1_im_id])
    .value(i1_re.hypot(i1_im) / 2f64.sqrt());
    let re_formula = format!("{node_re_sym} - omega_1 {l_sym} {i1_im_sym}");
    let mut re_inputs = vec![node_re_id, "output.omega1", "filter.inductance", i1_im_id];
    let im_formula = if node_im_id.is_empty() {
        format!("omega_1 {l_sym} {i1_re_sym}")
    } else {
        format!("{node_im_sym} + omega_1 {l_sym} {i1_re_sym}")
    };
    let mut im_inputs = vec!["output.omega1", "filter.inductance", i1_re_id];
    if !node_im_id.is_empty() {
        im_inputs.insert(0, node_im_id);
    }
    re_inputs.dedup();
    s.derive(
        "filter.v_sw_re",
        "Switch-node fundamental, in-phase part (peak)",
        "V_(\"sw\",\"re\")",
        Unit::Volt,
    )
    .formula(&re_formula)
    .inputs(&re_inputs)
    .value(node_re - w1 * gf.l1 * i1_im);
    s.derive(
        "filter.v_sw_im",
        "Switch-node fundamental, quadrature part (peak)",
        "V_(\"sw\",\"im\")",
        Unit::Volt,
    )
    .formula(&im_formula)
    .inputs(&im_inputs)
    .value(node_im + w1 * gf.l1 * i1_re);
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lcl(r_d: f64) -> GridFilter {
        GridFilter {
            l1: 1.2e-3,
            c: Some(10e-6),
            r_d,
            l2: 0.3e-3,
            l_grid: 0.05e-3,
        }
    }

    #[test]
    fn resonance_formula_matches_the_peak_of_the_evaluated_transfer_function() {
        // The undamped LCL's grid admittance |i_g / v_sw| has its pole at f_res; find
        // the peak by direct evaluation on a fine grid (circuit theory).
        let f = lcl(0.0);
        let want = f.resonance().unwrap();
        let (mut best_f, mut best) = (0.0, 0.0);
        let mut x = 0.5 * want;
        while x < 2.0 * want {
            let y = f.admittances(x).grid.norm();
            if y > best {
                best = y;
                best_f = x;
            }
            x *= 1.0 + 1e-5;
        }
        assert!((best_f / want - 1.0).abs() < 2e-5, "{best_f} vs {want}");
    }

    #[test]
    fn currents_obey_kirchhoff_and_the_l_filter_is_an_inductive_divider() {
        // KCL at the capacitor node: i_1 = i_C + i_g (circuit theory).
        for r_d in [0.0, 1.5] {
            let a = lcl(r_d).admittances(7_300.0);
            assert!((a.inverter - a.capacitor - a.grid).norm() < 1e-12 * a.inverter.norm());
        }
        // An L filter to a shorted grid: |Y| = 1 / (omega (L + L_g)).
        let l = GridFilter {
            l1: 2e-3,
            c: None,
            r_d: 0.0,
            l2: 0.0,
            l_grid: 0.1e-3,
        };
        let y = l.admittances(16e3).grid.norm();
        assert!((y * 2.0 * PI * 16e3 * 2.1e-3 - 1.0).abs() < 1e-12);
    }

    #[test]
    fn damping_lowers_the_resonant_peak_and_barely_changes_the_carrier_attenuation() {
        // A series R_d adds loss at resonance (circuit theory); well above resonance the
        // capacitor's reactance still dominates for R_d below it (common practice).
        let (u, d) = (lcl(0.0), lcl(1.0));
        let fr = u.resonance().unwrap();
        assert!(d.admittances(fr).grid.norm() < 0.2 * u.admittances(fr * 1.0001).grid.norm());
        let f_sw = 16e3;
        let ratio = d.admittances(f_sw).grid.norm() / u.admittances(f_sw).grid.norm();
        assert!(ratio > 0.9 && ratio < 2.0, "{ratio}");
    }
}
