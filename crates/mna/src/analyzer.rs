//! The [`Analyzer`]: a circuit stamped once, solved at any frequency and at DC.

use std::f64::consts::PI;

use num_complex::Complex64;
use rolloff_netlist::{Circuit, DriveError, NodeId, PartId, PartKind, ProbeKind};

use crate::bias::BiasReport;
use crate::error::{BiasWarning, MnaError, MnaWarning};
use crate::solver::{FactorReport, LinearSolver, SolverError};
use crate::sparse::{AutoLu, RowReplaced, SolverChoice};
use crate::system::{ParamRole, System, Unknown, node_unknown};
use crate::topology;

const ZERO: Complex64 = Complex64::new(0.0, 0.0);
const J: Complex64 = Complex64::new(0.0, 1.0);

/// Below this pivot ratio (smallest over largest pivot of the equilibrated matrix),
/// or above [`GROWTH_TRIGGER`] pivot growth, the condition number is estimated.
const PIVOT_RATIO_TRIGGER: f64 = 1e-6;
/// Pivot growth that triggers a condition estimate.
const GROWTH_TRIGGER: f64 = 1e6;
/// Pivot growth above which a warning is recorded (digits lost ≈ log10 of it).
const GROWTH_WARNING: f64 = 1e8;
/// Condition estimate above which a warning is recorded.
const ILL_CONDITIONED: f64 = 1e12;
/// A drive current at or below this many ulps of the currents meeting at its terminals
/// is taken as zero (an open circuit).
const OPEN_CIRCUIT_ULPS: f64 = 64.0;
/// Condition estimate above which no digit of the result can be trusted: an error.
const HOPELESS: f64 = 1.0 / f64::EPSILON;

/// A circuit stamped once into a [`System`], solved at any frequency and at DC.
///
/// `Analyzer` is `Clone + Send`: a tolerance run clones one per thread. All per-frequency
/// buffers are allocated in [`Analyzer::new`]; solving allocates nothing afterwards
/// (unless an error or a new warning is produced).
///
/// ```
/// use rolloff_mna::Analyzer;
/// use rolloff_netlist::{Circuit, ProbeKind};
///
/// // An RC low-pass, 1 kΩ and 1 µF: fc = 1/(2πRC) ≈ 159.15 Hz (textbook first-order RC).
/// let circuit = Circuit::builder()
///     .vsrc("V1", "in", "gnd", 1.0)
///     .resistor("R1", "in", "out", 1e3)
///     .capacitor("C1", "out", "gnd", 1e-6)
///     .build()
///     .unwrap();
/// let out = circuit.node("out").unwrap();
/// let mut analyzer = Analyzer::new(&circuit).unwrap();
/// let fc = 1.0 / (2.0 * std::f64::consts::PI * 1e3 * 1e-6);
/// let h = analyzer.transfer(&ProbeKind::Node(out), fc).unwrap();
/// assert!((h.norm() - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-12);
/// assert!((h.arg().to_degrees() + 45.0).abs() < 1e-9);
///
/// // A sweep: values[probe][frequency].
/// let values = analyzer.sweep(&[ProbeKind::Node(out)], &[10.0, fc, 1e4]).unwrap();
/// assert!(values[0][0].norm() > values[0][2].norm());
/// ```
#[derive(Debug, Clone)]
pub struct Analyzer<S: LinearSolver = AutoLu> {
    circuit: Circuit,
    system: System,
    solver: S,
    warnings: Vec<MnaWarning>,
    ill_warning: Option<usize>,
    drive: Result<PartId, DriveError>,
    drive_source: Option<usize>,
    dc_check: Result<(), MnaError>,
    factored: Option<f64>,
    drive_solved: bool,
    derivative_solved: bool,
    x: Vec<Complex64>,
    dx: Vec<Complex64>,
    aux: Vec<Complex64>,
    aux_d: Vec<Complex64>,
}

/// A probe value and its ω-derivative.
type ValueAndSlope = (Complex64, Complex64);

impl Analyzer<AutoLu> {
    /// Stamps a circuit and runs the structural checks. The linear solver is chosen by
    /// size and fill ([`AutoLu`]): dense for small systems, sparse for large ones.
    ///
    /// # Errors
    /// Names the cause when the AC system is structurally singular: a node with no
    /// path to `gnd` ([`MnaError::FloatingNode`]), nodes fed only by current sources
    /// ([`MnaError::CurrentCutSet`]), a loop of voltage sources
    /// ([`MnaError::SourceLoop`]), an ideal op-amp without feedback
    /// ([`MnaError::OpAmpNoFeedback`]); a part value that is not finite (and
    /// positive where it must be) ([`MnaError::BadValue`]); a node or drive id that is
    /// not in the circuit ([`MnaError::UnknownNode`], [`MnaError::UnknownPart`]).
    pub fn new(circuit: &Circuit) -> Result<Analyzer<AutoLu>, MnaError> {
        Analyzer::with_choice(circuit, SolverChoice::Auto)
    }

    /// As [`Analyzer::new`], with the dense or sparse kernel forced (or chosen
    /// automatically with [`SolverChoice::Auto`]).
    ///
    /// # Errors
    /// As [`Analyzer::new`].
    pub fn with_choice(
        circuit: &Circuit,
        choice: SolverChoice,
    ) -> Result<Analyzer<AutoLu>, MnaError> {
        Analyzer::build(std::borrow::Cow::Borrowed(circuit), |system| {
            AutoLu::with_choice(system, choice)
        })
    }

    /// As [`Analyzer::with_choice`], taking the circuit by value so that a very large
    /// circuit is not held twice.
    ///
    /// # Errors
    /// As [`Analyzer::new`].
    pub fn from_circuit(
        circuit: Circuit,
        choice: SolverChoice,
    ) -> Result<Analyzer<AutoLu>, MnaError> {
        Analyzer::build(std::borrow::Cow::Owned(circuit), |system| {
            AutoLu::with_choice(system, choice)
        })
    }
}

impl<S: LinearSolver> Analyzer<S> {
    /// As [`Analyzer::new`], with another linear solver.
    ///
    /// # Errors
    /// As [`Analyzer::new`].
    pub fn with_solver(circuit: &Circuit) -> Result<Analyzer<S>, MnaError> {
        Analyzer::build(std::borrow::Cow::Borrowed(circuit), S::for_system)
    }

    fn build(
        circuit: std::borrow::Cow<'_, Circuit>,
        make: impl FnOnce(&System) -> S,
    ) -> Result<Analyzer<S>, MnaError> {
        let owned = circuit;
        let circuit: &Circuit = &owned;
        check_ids(circuit)?;
        topology::check(circuit, false)?;
        let system = System::new(circuit);
        for p in system.params() {
            let ok = p.value.is_finite() && (!p.role.must_be_positive() || p.value > 0.0);
            if !ok {
                return Err(MnaError::BadValue {
                    part: circuit.parts[p.part.index()].name.clone(),
                    value: p.value,
                    positive: p.role.must_be_positive(),
                });
            }
        }
        let drive = circuit.drive_source();
        let drive_source = drive
            .as_ref()
            .ok()
            .and_then(|d| system.sources().iter().position(|s| s.part == *d));
        let dc_check = topology::check(circuit, true);
        let dim = system.dim();
        let mut analyzer = Analyzer {
            circuit: owned.into_owned(),
            solver: make(&system),
            system,
            warnings: Vec::new(),
            ill_warning: None,
            drive,
            drive_source,
            dc_check,
            factored: None,
            drive_solved: false,
            derivative_solved: false,
            x: vec![ZERO; dim],
            dx: vec![ZERO; dim],
            aux: vec![ZERO; dim],
            aux_d: vec![ZERO; dim],
        };
        analyzer.check_feedback_signs();
        Ok(analyzer)
    }

    /// The circuit, with any values changed by [`Analyzer::set_part_value`].
    pub fn circuit(&self) -> &Circuit {
        &self.circuit
    }

    /// The stamped system.
    pub fn system(&self) -> &System {
        &self.system
    }

    /// The linear solver (for its own statistics).
    pub fn solver(&self) -> &S {
        &self.solver
    }

    /// Warnings found so far: positive op-amp feedback (at construction) and
    /// ill-conditioning (the worst frequency, updated as solves run).
    pub fn warnings(&self) -> &[MnaWarning] {
        &self.warnings
    }

    /// The probe's value with only the drive active, divided by the drive's amplitude
    /// (its EMF before `rs`, or its current), phase relative to the drive's phase:
    /// V/V, A/V (S), V/A (Ω), A/A. `InputImpedance` and `OutputImpedance` give
    /// impedances in Ω. `freq_hz` may be 0 (the DC point of a linear sweep: capacitors
    /// open, inductors shorted).
    ///
    /// `InputImpedance` is what the drive sees at its terminals with itself removed,
    /// its own `rs` or `rp` excluded and the other sources zeroed (their `rs`/`rp`
    /// kept). `OutputImpedance(n)` is the impedance from node `n` to `gnd` with every
    /// independent source zeroed, `rs`/`rp` kept.
    ///
    /// # Errors
    /// [`MnaError::Drive`] when no drive can be chosen (not for `OutputImpedance`),
    /// [`MnaError::Singular`] naming the unknown and the frequency, the DC structural
    /// errors at 0 Hz, [`MnaError::ZeroDenominator`], [`MnaError::InfiniteImpedance`],
    /// [`MnaError::BadFrequency`], [`MnaError::NotFinite`].
    pub fn transfer(&mut self, probe: &ProbeKind, freq_hz: f64) -> Result<Complex64, MnaError> {
        self.factor_at(freq_hz)?;
        Ok(self.probe_value(probe, freq_hz, false)?.0)
    }

    /// Value and `d(value)/dω` (per rad/s) of a transfer probe, from one extra solve
    /// with the same factors: `dx/dω = −Y⁻¹(jC)x`, with the quotient rule for ratios
    /// and impedances.
    ///
    /// # Errors
    /// As [`Analyzer::transfer`].
    pub fn transfer_with_derivative(
        &mut self,
        probe: &ProbeKind,
        freq_hz: f64,
    ) -> Result<(Complex64, Complex64), MnaError> {
        self.factor_at(freq_hz)?;
        self.probe_value(probe, freq_hz, true)
    }

    /// Several transfer probes from one factorisation at one frequency.
    ///
    /// # Errors
    /// As [`Analyzer::transfer`] (the first failing probe), and
    /// [`MnaError::OutputLength`] when `out` and `probes` differ in length.
    pub fn transfer_many(
        &mut self,
        probes: &[ProbeKind],
        freq_hz: f64,
        out: &mut [Complex64],
    ) -> Result<(), MnaError> {
        if out.len() != probes.len() {
            return Err(MnaError::OutputLength {
                expected: probes.len(),
                got: out.len(),
            });
        }
        self.factor_at(freq_hz)?;
        for (o, p) in out.iter_mut().zip(probes) {
            *o = self.probe_value(p, freq_hz, false)?.0;
        }
        Ok(())
    }

    /// Transfer probes over a list of frequencies (from a log, linear or list
    /// [`rolloff_netlist::Sweep`] via `frequencies()`): `values[probe][freq]`.
    ///
    /// # Errors
    /// The first error of [`Analyzer::transfer_many`] at any frequency.
    pub fn sweep(
        &mut self,
        probes: &[ProbeKind],
        freqs: &[f64],
    ) -> Result<Vec<Vec<Complex64>>, MnaError> {
        let mut values = vec![vec![ZERO; freqs.len()]; probes.len()];
        let mut point = vec![ZERO; probes.len()];
        for (fi, &f) in freqs.iter().enumerate() {
            self.transfer_many(probes, f, &mut point)?;
            for (row, &v) in values.iter_mut().zip(&point) {
                row[fi] = v;
            }
        }
        Ok(values)
    }

    /// The probe with every independent AC source at its amplitude and phase
    /// (absolute phasors, not normalised). Impedance probes give the same impedance as
    /// [`Analyzer::transfer`].
    ///
    /// # Errors
    /// As [`Analyzer::transfer`] (no drive is needed except for `InputImpedance`).
    pub fn superposed(&mut self, probe: &ProbeKind, freq_hz: f64) -> Result<Complex64, MnaError> {
        if matches!(
            probe,
            ProbeKind::InputImpedance | ProbeKind::OutputImpedance(_)
        ) {
            return self.transfer(probe, freq_hz);
        }
        self.validate_probe(probe)?;
        self.factor_at(freq_hz)?;
        let mut x = std::mem::take(&mut self.aux);
        x.fill(ZERO);
        for s in self.system.sources() {
            if let Some(amp) = s.amplitude {
                let phasor = Complex64::from_polar(amp, s.phase_deg.to_radians());
                for &(r, v) in &s.rhs {
                    x[r] += phasor * v;
                }
            }
        }
        self.solver.solve_in_place(&mut x);
        let omega = 2.0 * PI * freq_hz;
        let value = self.linear_value(probe, &x, None, omega, freq_hz, true);
        self.aux = x;
        let (v, _) = value?;
        finite(v, "the superposed value", freq_hz)
    }

    /// The DC bias: capacitors open, inductors shorted, sources at their `bias` values,
    /// ideal op-amps as at AC. Checks every capacitor's voltage against its `rated`
    /// value, `polar` capacitors for reverse bias, and op-amp outputs against `swing`.
    ///
    /// # Errors
    /// The DC structural errors by name (a node reaching `gnd` only through
    /// capacitors, a loop of sources and inductors, a current cut set with capacitors
    /// open, an op-amp whose feedback runs only through capacitors), or
    /// [`MnaError::Singular`] at 0 Hz.
    pub fn bias(&mut self) -> Result<BiasReport, MnaError> {
        self.factor_at(0.0)?;
        let mut x = std::mem::take(&mut self.aux);
        x.fill(ZERO);
        for s in self.system.sources() {
            for &(r, v) in &s.rhs {
                x[r] += s.bias * v;
            }
        }
        self.solver.solve_in_place(&mut x);
        let result = self.bias_report(&x);
        self.aux = x;
        result
    }

    /// A part's value as a parameter: R in Ω, C in F, L in H, a `vsrc`'s `rs`, an
    /// `isrc`'s `rp`, a `vcvs`'s gain, a `vccs`'s `gm`, an op-amp's `gain` (else its
    /// `gbw`). `None` for parts without one (ideal op-amps, sources without `rs`/`rp`).
    pub fn part_value(&self, part: PartId) -> Option<f64> {
        self.system.main_param(part).map(|i| self.system.param(i))
    }

    /// Changes a part's value (see [`Analyzer::part_value`]) in the parameter vector;
    /// the structure is not re-stamped.
    ///
    /// # Errors
    /// [`MnaError::UnknownPart`], [`MnaError::NoValue`] for a part without a value,
    /// [`MnaError::BadValue`] for a value that is not finite (or not positive where it
    /// must be).
    pub fn set_part_value(&mut self, part: PartId, value: f64) -> Result<(), MnaError> {
        let Some(p) = self.circuit.parts.get(part.index()) else {
            return Err(MnaError::UnknownPart(part.0));
        };
        let Some(index) = self.system.main_param(part) else {
            return Err(MnaError::NoValue {
                part: p.name.clone(),
            });
        };
        let role = self.system.params()[index].role;
        if !(value.is_finite() && (!role.must_be_positive() || value > 0.0)) {
            return Err(MnaError::BadValue {
                part: p.name.clone(),
                value,
                positive: role.must_be_positive(),
            });
        }
        self.system.set_param(index, value);
        set_kind_value(&mut self.circuit.parts[part.index()].kind, role, value);
        self.invalidate();
        Ok(())
    }

    /// The 1-norm condition estimate of the equilibrated system at a frequency (a
    /// diagnostic; costs a few extra solves).
    ///
    /// # Errors
    /// As the factorisation in [`Analyzer::transfer`].
    pub fn condition_estimate(&mut self, freq_hz: f64) -> Result<f64, MnaError> {
        self.factor_at(freq_hz)?;
        Ok(self.solver.condition_estimate())
    }

    // ----------------------------------------------------------------------------------

    fn invalidate(&mut self) {
        self.factored = None;
        self.drive_solved = false;
        self.derivative_solved = false;
    }

    fn unknown_name(&self, k: usize) -> String {
        match self.system.unknowns().get(k) {
            Some(Unknown::NodeVoltage(n)) => format!("node `{}`", self.circuit.nodes[n.index()]),
            Some(Unknown::BranchCurrent(p)) => {
                format!("the current of `{}`", self.circuit.parts[p.index()].name)
            }
            None => format!("unknown {k}"),
        }
    }

    fn factor_at(&mut self, freq_hz: f64) -> Result<(), MnaError> {
        if !(freq_hz.is_finite() && freq_hz >= 0.0) {
            return Err(MnaError::BadFrequency { freq_hz });
        }
        let omega = 2.0 * PI * freq_hz;
        if self.factored == Some(omega) {
            return Ok(());
        }
        self.invalidate();
        if freq_hz == 0.0 {
            self.dc_check.clone()?;
        }
        let report = match self.solver.factor(&self.system, omega) {
            Ok(r) => r,
            Err(SolverError::ZeroRow { row: k } | SolverError::ZeroPivot { unknown: k }) => {
                return Err(MnaError::Singular {
                    freq_hz,
                    near: self.unknown_name(k),
                    unknown: k,
                    condition: None,
                });
            }
        };
        self.judge_conditioning(&report, freq_hz)?;
        self.factored = Some(omega);
        Ok(())
    }

    fn judge_conditioning(&mut self, report: &FactorReport, freq_hz: f64) -> Result<(), MnaError> {
        if report.pivot_ratio >= PIVOT_RATIO_TRIGGER && report.growth <= GROWTH_TRIGGER {
            return Ok(());
        }
        let k = self.solver.condition_estimate();
        let unknown = report.smallest_pivot_unknown;
        if !k.is_finite() || k > HOPELESS {
            return Err(MnaError::Singular {
                freq_hz,
                near: self.unknown_name(unknown),
                unknown,
                condition: k.is_finite().then_some(k),
            });
        }
        if k > ILL_CONDITIONED || report.growth > GROWTH_WARNING {
            let near = self.unknown_name(unknown);
            if let Some(i) = self.ill_warning {
                if let Some(MnaWarning::IllConditioned {
                    freq_hz: f,
                    condition,
                    near: n,
                    count,
                }) = self.warnings.get_mut(i)
                {
                    *count += 1;
                    if k > *condition {
                        *condition = k;
                        *f = freq_hz;
                        *n = near;
                    }
                }
            } else {
                self.ill_warning = Some(self.warnings.len());
                self.warnings.push(MnaWarning::IllConditioned {
                    freq_hz,
                    condition: k,
                    near,
                    count: 1,
                });
            }
        }
        Ok(())
    }

    fn solve_drive(&mut self, freq_hz: f64, derivative: bool) -> Result<(), MnaError> {
        let Some(source) = self.drive_source else {
            return Err(match &self.drive {
                Err(e) => MnaError::Drive(e.clone()),
                Ok(_) => MnaError::Drive(DriveError::NoAcSource),
            });
        };
        if !self.drive_solved {
            self.x.fill(ZERO);
            for &(r, v) in &self.system.sources()[source].rhs {
                self.x[r] += v;
            }
            self.solver.solve_in_place(&mut self.x);
            if !self.x.iter().all(|z| z.is_finite()) {
                return Err(MnaError::NotFinite {
                    what: "the solution".into(),
                    freq_hz,
                });
            }
            self.drive_solved = true;
        }
        if derivative && !self.derivative_solved {
            derivative_solve(&self.system, &mut self.solver, &self.x, &mut self.dx);
            self.derivative_solved = true;
        }
        Ok(())
    }

    fn validate_probe(&self, probe: &ProbeKind) -> Result<(), MnaError> {
        let node_ok = |n: &NodeId| {
            if n.index() < self.circuit.nodes.len() {
                Ok(())
            } else {
                Err(MnaError::UnknownNode(n.0))
            }
        };
        match probe {
            ProbeKind::Node(n) | ProbeKind::OutputImpedance(n) => node_ok(n),
            ProbeKind::Ratio { num: a, den: b } | ProbeKind::Difference { pos: a, neg: b } => {
                node_ok(a)?;
                node_ok(b)
            }
            ProbeKind::Current(p) => {
                if p.index() < self.circuit.parts.len() {
                    Ok(())
                } else {
                    Err(MnaError::UnknownPart(p.0))
                }
            }
            ProbeKind::InputImpedance => Ok(()),
        }
    }

    /// Value (and derivative when asked) of a probe; the system is factorised.
    fn probe_value(
        &mut self,
        probe: &ProbeKind,
        freq_hz: f64,
        derivative: bool,
    ) -> Result<ValueAndSlope, MnaError> {
        self.validate_probe(probe)?;
        let omega = 2.0 * PI * freq_hz;
        let (v, d) = if let ProbeKind::OutputImpedance(n) = probe {
            self.output_impedance(*n, derivative)
        } else {
            self.solve_drive(freq_hz, derivative)?;
            let dx = derivative.then_some(self.dx.as_slice());
            self.linear_value(probe, &self.x, dx, omega, freq_hz, false)?
        };
        let v = finite(v, "the probe value", freq_hz)?;
        let d = finite(d, "the probe's derivative", freq_hz)?;
        Ok((v, d))
    }

    fn output_impedance(&mut self, n: NodeId, derivative: bool) -> ValueAndSlope {
        let Some(k) = node_unknown(n) else {
            return (ZERO, ZERO);
        };
        self.aux.fill(ZERO);
        self.aux[k] = Complex64::new(1.0, 0.0);
        self.solver.solve_in_place(&mut self.aux);
        let z = self.aux[k];
        if !derivative {
            return (z, ZERO);
        }
        derivative_solve(&self.system, &mut self.solver, &self.aux, &mut self.aux_d);
        (z, self.aux_d[k])
    }

    /// The value of a probe that is a function of one solution vector.
    ///
    /// `superposed` selects the source currents of `isrc` parts: their own phasors
    /// (true) or the unit drive (false).
    fn linear_value(
        &self,
        probe: &ProbeKind,
        x: &[Complex64],
        dx: Option<&[Complex64]>,
        omega: f64,
        freq_hz: f64,
        superposed: bool,
    ) -> Result<ValueAndSlope, MnaError> {
        let v = |n: NodeId| node_value(x, n);
        let dv = |n: NodeId| dx.map_or(ZERO, |d| node_value(d, n));
        match *probe {
            ProbeKind::Node(n) => Ok((v(n), dv(n))),
            ProbeKind::Difference { pos, neg } => Ok((v(pos) - v(neg), dv(pos) - dv(neg))),
            ProbeKind::Ratio { num, den } => {
                let (a, b) = (v(num), v(den));
                if b == ZERO {
                    return Err(MnaError::ZeroDenominator {
                        node: self.circuit.nodes[den.index()].clone(),
                        freq_hz,
                    });
                }
                Ok((a / b, (dv(num) * b - a * dv(den)) / (b * b)))
            }
            ProbeKind::Current(p) => Ok(self.part_current(p, x, dx, omega, superposed)),
            ProbeKind::InputImpedance => self.input_impedance(x, dx, omega, freq_hz),
            ProbeKind::OutputImpedance(_) => Ok((ZERO, ZERO)),
        }
    }

    fn input_impedance(
        &self,
        x: &[Complex64],
        dx: Option<&[Complex64]>,
        omega: f64,
        freq_hz: f64,
    ) -> Result<ValueAndSlope, MnaError> {
        let drive = self.drive.clone()?;
        // The scale of the currents that cancel in the drive's current: below a few
        // hundred ulps of it the current is indistinguishable from zero, and the
        // impedance has no correct digit (an open circuit seen through roundoff).
        let scale;
        let dxs = |n: NodeId| dx.map_or(ZERO, |d| node_value(d, n));
        let (volt, dvolt, cur, dcur) = match self.circuit.parts[drive.index()].kind {
            PartKind::VoltageSource { pos, neg, .. } => {
                let k = self.system.branch(drive).unwrap_or_default();
                let i = -x[k];
                let di = dx.map_or(ZERO, |d| -d[k]);
                scale = self.kcl_terms(x, pos, k, omega) + self.kcl_terms(x, neg, k, omega);
                (
                    node_value(x, pos) - node_value(x, neg),
                    dxs(pos) - dxs(neg),
                    i,
                    di,
                )
            }
            PartKind::CurrentSource { from, to, rp, .. } => {
                let volt = node_value(x, to) - node_value(x, from);
                let dvolt = dxs(to) - dxs(from);
                let g = rp.map_or(0.0, |_| self.part_value(drive).map_or(0.0, |r| 1.0 / r));
                scale = 1.0 + (volt * g).norm();
                (volt, dvolt, Complex64::new(1.0, 0.0) - volt * g, -dvolt * g)
            }
            _ => return Err(MnaError::Drive(DriveError::NoAcSource)),
        };
        if cur.norm() <= OPEN_CIRCUIT_ULPS * f64::EPSILON * scale {
            return Err(MnaError::InfiniteImpedance {
                what: "the input impedance".into(),
                freq_hz,
            });
        }
        Ok((volt / cur, (dvolt * cur - volt * dcur) / (cur * cur)))
    }

    /// `Σ_j |Y_nj · x_j|` over the KCL row of node `n`, without column `skip`: the size
    /// of the currents that meet at the node.
    fn kcl_terms(&self, x: &[Complex64], n: NodeId, skip: usize, omega: f64) -> f64 {
        let Some(row) = node_unknown(n) else {
            return 0.0;
        };
        let (col_ptr, row_idx) = self.system.csc_pattern();
        let (g, c) = (self.system.g_values(), self.system.c_values());
        let mut total = 0.0;
        for (j, &xj) in x.iter().enumerate() {
            if j == skip {
                continue;
            }
            for k in col_ptr[j]..col_ptr[j + 1] {
                if row_idx[k] == row {
                    total += (Complex64::new(g[k], omega * c[k]) * xj).norm();
                }
            }
        }
        total
    }

    /// The current through a part from its first node to its second (for an op-amp,
    /// from its output node into it), and its ω-derivative when `dx` is given.
    fn part_current(
        &self,
        p: PartId,
        x: &[Complex64],
        dx: Option<&[Complex64]>,
        omega: f64,
        superposed: bool,
    ) -> ValueAndSlope {
        let v2 = |x: &[Complex64], a, b| node_value(x, a) - node_value(x, b);
        let d2 = |a, b| dx.map_or(ZERO, |d| v2(d, a, b));
        let val = self.part_value(p).unwrap_or(1.0);
        match self.circuit.parts[p.index()].kind {
            PartKind::Resistor { a, b, .. } => {
                let r = val;
                (v2(x, a, b) / r, d2(a, b) / r)
            }
            PartKind::Capacitor { a, b, .. } => {
                let c = val;
                let v = v2(x, a, b);
                (J * omega * c * v, J * c * v + J * omega * c * d2(a, b))
            }
            PartKind::Inductor { .. }
            | PartKind::VoltageSource { .. }
            | PartKind::Vcvs { .. }
            | PartKind::OpAmp { .. } => {
                let k = self.system.branch(p).unwrap_or_default();
                (x[k], dx.map_or(ZERO, |d| d[k]))
            }
            PartKind::CurrentSource {
                from,
                to,
                rp,
                amplitude,
                phase_deg,
                ..
            } => {
                let own = if superposed {
                    amplitude.map_or(ZERO, |a| Complex64::from_polar(a, phase_deg.to_radians()))
                } else if self.drive.as_ref().ok() == Some(&p) {
                    Complex64::new(1.0, 0.0)
                } else {
                    ZERO
                };
                let g = rp.map_or(0.0, |_| 1.0 / val);
                (own + v2(x, from, to) * g, d2(from, to) * g)
            }
            PartKind::Vccs { in_pos, in_neg, .. } => {
                let gm = val;
                (v2(x, in_pos, in_neg) * gm, d2(in_pos, in_neg) * gm)
            }
        }
    }

    fn bias_report(&self, x: &[Complex64]) -> Result<BiasReport, MnaError> {
        if !x.iter().all(|z| z.is_finite()) {
            return Err(MnaError::NotFinite {
                what: "the bias solution".into(),
                freq_hz: 0.0,
            });
        }
        let node_voltages: Vec<f64> = (0..self.circuit.nodes.len())
            .map(|i| node_value(x, NodeId(i as u32)).re)
            .collect();
        let mut part_currents = Vec::with_capacity(self.circuit.parts.len());
        let mut warnings = Vec::new();
        let scale = node_voltages.iter().fold(1.0f64, |m, v| m.max(v.abs()));
        for (i, part) in self.circuit.parts.iter().enumerate() {
            let id = PartId(i as u32);
            let current = match part.kind {
                PartKind::Capacitor { .. } => 0.0,
                PartKind::CurrentSource {
                    from, to, rp, bias, ..
                } => {
                    let g = rp.map_or(0.0, |_| 1.0 / self.part_value(id).unwrap_or(f64::MAX));
                    bias.unwrap_or(0.0)
                        + (node_voltages[from.index()] - node_voltages[to.index()]) * g
                }
                _ => self.part_current(id, x, None, 0.0, false).0.re,
            };
            part_currents.push(Some(current));
            match part.kind {
                PartKind::Capacitor {
                    a, b, rated, polar, ..
                } => {
                    let v = node_voltages[a.index()] - node_voltages[b.index()];
                    if let Some(rated) = rated
                        && v.abs() > rated
                    {
                        warnings.push(BiasWarning::OverRated {
                            part: part.name.clone(),
                            voltage: v,
                            rated,
                        });
                    }
                    if polar && v < -1e-12 * scale {
                        warnings.push(BiasWarning::ReversePolarity {
                            part: part.name.clone(),
                            voltage: v,
                        });
                    }
                }
                PartKind::OpAmp {
                    out,
                    swing: Some((low, high)),
                    ..
                } => {
                    let v = node_voltages[out.index()];
                    if v < low || v > high {
                        warnings.push(BiasWarning::SwingExceeded {
                            part: part.name.clone(),
                            voltage: v,
                            low,
                            high,
                        });
                    }
                }
                _ => {}
            }
        }
        Ok(BiasReport {
            node_voltages,
            part_currents,
            warnings,
        })
    }

    /// Evaluates each op-amp's feedback factor `β = ∂(v+ − v−)/∂v_out` with its output
    /// driven by a test source (the other sources zeroed, the other op-amps as
    /// modelled), at DC when the DC system is sound, else from 1 Hz up by decades to
    /// 100 MHz; the first frequency where `|β| > 1e-9` decides, and `Re β > 0` is
    /// positive feedback.
    fn check_feedback_signs(&mut self) {
        let mut rhs = Vec::new();
        for (k, part) in self.circuit.parts.iter().enumerate() {
            let PartKind::OpAmp {
                out,
                in_pos,
                in_neg,
                ..
            } = part.kind
            else {
                continue;
            };
            let (Some(row), Some(out_col)) =
                (self.system.branch(PartId(k as u32)), node_unknown(out))
            else {
                continue;
            };
            let dc_ok = self.dc_check.is_ok();
            let freqs = std::iter::once(0.0)
                .filter(|_| dc_ok)
                .chain((0..=8).map(|e| 10f64.powi(e)));
            let mut test = RowReplaced::new(&self.system, row, out_col);
            for f in freqs {
                if !test.solve(&self.system, 2.0 * PI * f, &mut rhs) {
                    continue;
                }
                let beta = node_value(&rhs, in_pos) - node_value(&rhs, in_neg);
                if !beta.is_finite() || beta.norm() <= 1e-9 {
                    continue;
                }
                if beta.re > 0.0 {
                    self.warnings.push(MnaWarning::PositiveFeedback {
                        part: part.name.clone(),
                        loop_gain: beta.re,
                        freq_hz: f,
                    });
                }
                break;
            }
        }
    }
}

/// Every id a part or the drive holds must index into the circuit (the builder does
/// not check node ids given to `part`).
fn check_ids(circuit: &Circuit) -> Result<(), MnaError> {
    for part in &circuit.parts {
        if let Some(bad) = part
            .kind
            .nodes()
            .into_iter()
            .find(|n| n.index() >= circuit.nodes.len())
        {
            return Err(MnaError::UnknownNode(bad.0));
        }
    }
    match circuit.drive {
        Some(d) if d.index() >= circuit.parts.len() => Err(MnaError::UnknownPart(d.0)),
        _ => Ok(()),
    }
}

/// `dx = −Y⁻¹ (jC) x` with the current factors.
fn derivative_solve<S: LinearSolver>(
    system: &System,
    solver: &mut S,
    x: &[Complex64],
    dx: &mut [Complex64],
) {
    system.c_times(x, dx);
    for z in dx.iter_mut() {
        *z *= -J;
    }
    solver.solve_in_place(dx);
}

fn node_value(x: &[Complex64], n: NodeId) -> Complex64 {
    node_unknown(n).map_or(ZERO, |k| x[k])
}

fn finite(v: Complex64, what: &str, freq_hz: f64) -> Result<Complex64, MnaError> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(MnaError::NotFinite {
            what: what.to_string(),
            freq_hz,
        })
    }
}

fn set_kind_value(kind: &mut PartKind, role: ParamRole, v: f64) {
    match (kind, role) {
        (
            PartKind::Resistor { value, .. }
            | PartKind::Capacitor { value, .. }
            | PartKind::Inductor { value, .. },
            _,
        ) => *value = v,
        (PartKind::VoltageSource { rs, .. }, _) => *rs = Some(v),
        (PartKind::CurrentSource { rp, .. }, _) => *rp = Some(v),
        (PartKind::Vcvs { gain, .. }, _) => *gain = v,
        (PartKind::Vccs { gm, .. }, _) => *gm = v,
        (PartKind::OpAmp { gain, .. }, ParamRole::OpenLoopGain) => *gain = Some(v),
        (PartKind::OpAmp { gbw, .. }, _) => *gbw = Some(v),
    }
}

mod parallel;
