//! The stamped system `Y(jω) = G + jωC`: unknowns, the stamp pattern with coefficients
//! that index the parameter vector, and the right-hand sides of the sources.

use num_complex::Complex64;
use rolloff_netlist::{Circuit, NodeId, PartId, PartKind};

/// One unknown of the system.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unknown {
    /// The voltage of a node to `gnd` (never `gnd` itself).
    NodeVoltage(NodeId),
    /// The branch current of a part that needs one (inductor, `vsrc`, `vcvs`, `opamp`),
    /// positive from its first node to its second through the part (for an `opamp`,
    /// from its output node into the op-amp).
    BranchCurrent(PartId),
}

/// Which of the two real matrices an entry belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Matrix {
    /// The conductance part `G` (frequency independent).
    G,
    /// The susceptance part `C` (multiplied by `jω`).
    C,
}

/// The numeric coefficient of one stamp entry, as a function of the parameter vector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Coef {
    /// A structural constant (±1 of an incidence).
    Const(f64),
    /// `scale · p[index]`.
    Param {
        /// Index into the parameter vector.
        index: usize,
        /// Constant factor (a sign, or `1/(2π)`).
        scale: f64,
    },
    /// `scale / p[index]`.
    Reciprocal {
        /// Index into the parameter vector.
        index: usize,
        /// Constant factor.
        scale: f64,
    },
}

impl Coef {
    /// The value for a parameter vector.
    pub fn eval(&self, params: &[f64]) -> f64 {
        match *self {
            Coef::Const(v) => v,
            Coef::Param { index, scale } => scale * params[index],
            Coef::Reciprocal { index, scale } => scale / params[index],
        }
    }
}

/// One entry of the stamp pattern: `matrix[row][col] += coef(params)`.
///
/// Several entries may share a `(row, col)`; their values add up.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StampEntry {
    /// Row (equation) index.
    pub row: usize,
    /// Column (unknown) index.
    pub col: usize,
    /// `G` or `C`.
    pub matrix: Matrix,
    /// The coefficient.
    pub coef: Coef,
}

/// What a parameter of the parameter vector is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ParamRole {
    /// A resistor's resistance (Ω).
    Resistance,
    /// A capacitor's capacitance (F).
    Capacitance,
    /// An inductor's inductance (H).
    Inductance,
    /// A `vsrc`'s series resistance `rs` (Ω).
    SeriesResistance,
    /// An `isrc`'s parallel resistance `rp` (Ω).
    ParallelResistance,
    /// A `vcvs`'s voltage gain (V/V).
    VoltageGain,
    /// A `vccs`'s transconductance (S).
    Transconductance,
    /// An op-amp's open-loop DC gain (V/V).
    OpenLoopGain,
    /// An op-amp's gain-bandwidth product (Hz).
    GainBandwidth,
}

impl ParamRole {
    /// Whether the value must be strictly positive (every role but the controlled
    /// sources' gains, which may have either sign).
    pub fn must_be_positive(self) -> bool {
        !matches!(self, ParamRole::VoltageGain | ParamRole::Transconductance)
    }
}

/// One entry of the parameter vector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Parameter {
    /// The part it belongs to.
    pub part: PartId,
    /// What it is.
    pub role: ParamRole,
    /// The current value in SI units.
    pub value: f64,
}

/// The right-hand side pattern of one independent source for a unit excitation.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceStamp {
    /// The source part.
    pub part: PartId,
    /// `(row, value)` pairs of the right-hand side for a unit EMF or current.
    pub rhs: Vec<(usize, f64)>,
    /// Small-signal amplitude (V or A), if it is an AC source.
    pub amplitude: Option<f64>,
    /// Phase in degrees.
    pub phase_deg: f64,
    /// DC value for the bias analysis (0 when absent).
    pub bias: f64,
}

/// The stamped system of a circuit.
///
/// Unknowns are the node voltages (node `k` of the circuit, `k ≥ 1`, is unknown `k-1`)
/// followed by one branch current for every inductor, `vsrc`, `vcvs` and `opamp`, in
/// part order. The stamp pattern never changes after [`System::new`]; part values live
/// in the parameter vector and [`System::set_param`] changes numbers only.
#[derive(Debug, Clone)]
pub struct System {
    dim: usize,
    unknowns: Vec<Unknown>,
    entries: Vec<StampEntry>,
    params: Vec<Parameter>,
    main_param: Vec<Option<usize>>,
    branch: Vec<Option<usize>>,
    sources: Vec<SourceStamp>,
    /// Column pointers of the compressed-column pattern (`dim + 1` entries).
    col_ptr: Vec<usize>,
    /// Row indices of the pattern, column by column, sorted within each column.
    row_idx: Vec<usize>,
    /// For each stamp entry, its position in the pattern.
    entry_slot: Vec<usize>,
    /// `G` and `C` values on the pattern.
    g: Vec<f64>,
    c: Vec<f64>,
}

/// The unknown index of a node, `None` for `gnd`.
pub(crate) fn node_unknown(n: NodeId) -> Option<usize> {
    if n.is_ground() {
        None
    } else {
        Some(n.index() - 1)
    }
}

struct Stamper {
    entries: Vec<StampEntry>,
}

impl Stamper {
    fn add(&mut self, row: Option<usize>, col: Option<usize>, matrix: Matrix, coef: Coef) {
        if let (Some(row), Some(col)) = (row, col) {
            self.entries.push(StampEntry {
                row,
                col,
                matrix,
                coef,
            });
        }
    }

    /// An admittance `y(p)` between nodes `a` and `b` (the classic four entries).
    fn admittance(&mut self, a: NodeId, b: NodeId, matrix: Matrix, index: usize, reciprocal: bool) {
        let (ra, rb) = (node_unknown(a), node_unknown(b));
        let coef = |scale| {
            if reciprocal {
                Coef::Reciprocal { index, scale }
            } else {
                Coef::Param { index, scale }
            }
        };
        self.add(ra, ra, matrix, coef(1.0));
        self.add(rb, rb, matrix, coef(1.0));
        self.add(ra, rb, matrix, coef(-1.0));
        self.add(rb, ra, matrix, coef(-1.0));
    }

    /// KCL entries of a branch current `k` flowing from `a` to `b` through the part.
    fn branch_kcl(&mut self, a: NodeId, b: NodeId, k: usize) {
        self.add(node_unknown(a), Some(k), Matrix::G, Coef::Const(1.0));
        self.add(node_unknown(b), Some(k), Matrix::G, Coef::Const(-1.0));
    }

    /// `+v(a) − v(b)` in the equation row `k`.
    fn branch_voltage(&mut self, k: usize, a: NodeId, b: NodeId) {
        self.add(Some(k), node_unknown(a), Matrix::G, Coef::Const(1.0));
        self.add(Some(k), node_unknown(b), Matrix::G, Coef::Const(-1.0));
    }
}

impl System {
    /// Stamps a circuit once.
    pub fn new(circuit: &Circuit) -> System {
        let n_nodes = circuit.nodes.len().saturating_sub(1);
        let mut unknowns: Vec<Unknown> = (1..=n_nodes)
            .map(|i| Unknown::NodeVoltage(NodeId(i as u32)))
            .collect();
        let mut branch = vec![None; circuit.parts.len()];
        for (i, part) in circuit.parts.iter().enumerate() {
            if matches!(
                part.kind,
                PartKind::Inductor { .. }
                    | PartKind::VoltageSource { .. }
                    | PartKind::Vcvs { .. }
                    | PartKind::OpAmp { .. }
            ) {
                branch[i] = Some(unknowns.len());
                unknowns.push(Unknown::BranchCurrent(PartId(i as u32)));
            }
        }
        let mut st = Stamper {
            entries: Vec::new(),
        };
        let mut params = Vec::new();
        let mut main_param = vec![None; circuit.parts.len()];
        let mut sources = Vec::new();
        let mut param = |part: usize, role, value: f64, main: bool| {
            params.push(Parameter {
                part: PartId(part as u32),
                role,
                value,
            });
            if main {
                main_param[part] = Some(params.len() - 1);
            }
            params.len() - 1
        };
        for (i, part) in circuit.parts.iter().enumerate() {
            let id = PartId(i as u32);
            match part.kind {
                PartKind::Resistor { a, b, value, .. } => {
                    let p = param(i, ParamRole::Resistance, value, true);
                    st.admittance(a, b, Matrix::G, p, true);
                }
                PartKind::Capacitor { a, b, value, .. } => {
                    let p = param(i, ParamRole::Capacitance, value, true);
                    st.admittance(a, b, Matrix::C, p, false);
                }
                PartKind::Inductor { a, b, value, .. } => {
                    let k = branch[i].unwrap_or_default();
                    let p = param(i, ParamRole::Inductance, value, true);
                    st.branch_kcl(a, b, k);
                    st.branch_voltage(k, a, b);
                    st.add(
                        Some(k),
                        Some(k),
                        Matrix::C,
                        Coef::Param {
                            index: p,
                            scale: -1.0,
                        },
                    );
                }
                PartKind::VoltageSource {
                    pos,
                    neg,
                    amplitude,
                    phase_deg,
                    bias,
                    rs,
                } => {
                    let k = branch[i].unwrap_or_default();
                    st.branch_kcl(pos, neg, k);
                    st.branch_voltage(k, pos, neg);
                    if let Some(rs) = rs {
                        let p = param(i, ParamRole::SeriesResistance, rs, true);
                        st.add(
                            Some(k),
                            Some(k),
                            Matrix::G,
                            Coef::Param {
                                index: p,
                                scale: -1.0,
                            },
                        );
                    }
                    sources.push(SourceStamp {
                        part: id,
                        rhs: vec![(k, 1.0)],
                        amplitude,
                        phase_deg,
                        bias: bias.unwrap_or(0.0),
                    });
                }
                PartKind::CurrentSource {
                    from,
                    to,
                    amplitude,
                    phase_deg,
                    bias,
                    rp,
                } => {
                    if let Some(rp) = rp {
                        let p = param(i, ParamRole::ParallelResistance, rp, true);
                        st.admittance(from, to, Matrix::G, p, true);
                    }
                    let mut rhs = Vec::new();
                    if let Some(r) = node_unknown(from) {
                        rhs.push((r, -1.0));
                    }
                    if let Some(r) = node_unknown(to) {
                        rhs.push((r, 1.0));
                    }
                    sources.push(SourceStamp {
                        part: id,
                        rhs,
                        amplitude,
                        phase_deg,
                        bias: bias.unwrap_or(0.0),
                    });
                }
                PartKind::Vcvs {
                    out_pos,
                    out_neg,
                    in_pos,
                    in_neg,
                    gain,
                } => {
                    let k = branch[i].unwrap_or_default();
                    let p = param(i, ParamRole::VoltageGain, gain, true);
                    st.branch_kcl(out_pos, out_neg, k);
                    st.branch_voltage(k, out_pos, out_neg);
                    let g = |scale| Coef::Param { index: p, scale };
                    st.add(Some(k), node_unknown(in_pos), Matrix::G, g(-1.0));
                    st.add(Some(k), node_unknown(in_neg), Matrix::G, g(1.0));
                }
                PartKind::Vccs {
                    out_pos,
                    out_neg,
                    in_pos,
                    in_neg,
                    gm,
                } => {
                    let p = param(i, ParamRole::Transconductance, gm, true);
                    let g = |scale| Coef::Param { index: p, scale };
                    let (op, on) = (node_unknown(out_pos), node_unknown(out_neg));
                    let (ip, inn) = (node_unknown(in_pos), node_unknown(in_neg));
                    st.add(op, ip, Matrix::G, g(1.0));
                    st.add(op, inn, Matrix::G, g(-1.0));
                    st.add(on, ip, Matrix::G, g(-1.0));
                    st.add(on, inn, Matrix::G, g(1.0));
                }
                PartKind::OpAmp {
                    out,
                    in_pos,
                    in_neg,
                    gain,
                    gbw,
                    ..
                } => {
                    // Row: (v+ − v−) − v_out/A − jω·v_out/(2π·gbw) = 0, i.e.
                    // A(jω) = A / (1 + jω·A/(2π·gbw)): a single pole at gbw/A.
                    // Without gain and gbw it is the nullor v+ = v−.
                    let k = branch[i].unwrap_or_default();
                    st.branch_kcl(out, NodeId::GND, k);
                    st.branch_voltage(k, in_pos, in_neg);
                    if let Some(a) = gain {
                        let p = param(i, ParamRole::OpenLoopGain, a, true);
                        let coef = Coef::Reciprocal {
                            index: p,
                            scale: -1.0,
                        };
                        st.add(Some(k), node_unknown(out), Matrix::G, coef);
                    }
                    if let Some(f) = gbw {
                        let p = param(i, ParamRole::GainBandwidth, f, gain.is_none());
                        let coef = Coef::Reciprocal {
                            index: p,
                            scale: -1.0 / (2.0 * std::f64::consts::PI),
                        };
                        st.add(Some(k), node_unknown(out), Matrix::C, coef);
                    }
                }
            }
        }
        let dim = unknowns.len();
        let entries = st.entries;
        let mut positions: Vec<(usize, usize)> = entries.iter().map(|e| (e.col, e.row)).collect();
        positions.sort_unstable();
        positions.dedup();
        let mut col_ptr = vec![0; dim + 1];
        for &(col, _) in &positions {
            col_ptr[col + 1] += 1;
        }
        for j in 0..dim {
            col_ptr[j + 1] += col_ptr[j];
        }
        let row_idx: Vec<usize> = positions.iter().map(|&(_, row)| row).collect();
        let entry_slot = entries
            .iter()
            .map(|e| positions.partition_point(|&p| p < (e.col, e.row)))
            .collect();
        let nnz = positions.len();
        let mut system = System {
            dim,
            unknowns,
            entries,
            params,
            main_param,
            branch,
            sources,
            col_ptr,
            row_idx,
            entry_slot,
            g: vec![0.0; nnz],
            c: vec![0.0; nnz],
        };
        system.refresh_numeric();
        system
    }

    /// Number of unknowns.
    pub fn dim(&self) -> usize {
        self.dim
    }

    /// The unknowns in order.
    pub fn unknowns(&self) -> &[Unknown] {
        &self.unknowns
    }

    /// The stamp pattern with coefficients.
    pub fn entries(&self) -> &[StampEntry] {
        &self.entries
    }

    /// The distinct `(row, col)` positions of the pattern (for a sparse solver's
    /// symbolic analysis), column-major: the order of [`System::g_values`].
    pub fn pattern(&self) -> Vec<(usize, usize)> {
        (0..self.dim)
            .flat_map(|j| {
                self.row_idx[self.col_ptr[j]..self.col_ptr[j + 1]]
                    .iter()
                    .map(move |&i| (i, j))
            })
            .collect()
    }

    /// The pattern in compressed-column form: column pointers (`dim + 1` of them) and
    /// row indices, sorted within each column.
    pub fn csc_pattern(&self) -> (&[usize], &[usize]) {
        (&self.col_ptr, &self.row_idx)
    }

    /// The values of `G` on the pattern.
    pub fn g_values(&self) -> &[f64] {
        &self.g
    }

    /// The values of `C` on the pattern.
    pub fn c_values(&self) -> &[f64] {
        &self.c
    }

    /// Writes `G + jωC` on the pattern into `values` (one per position).
    ///
    /// # Panics
    /// If `values` does not have one element per pattern position (a programming
    /// error).
    pub fn fill_values(&self, omega: f64, values: &mut [Complex64]) {
        assert_eq!(values.len(), self.g.len(), "value buffer size");
        for ((v, &g), &c) in values.iter_mut().zip(&self.g).zip(&self.c) {
            *v = Complex64::new(g, omega * c);
        }
    }

    /// The parameter vector.
    pub fn params(&self) -> &[Parameter] {
        &self.params
    }

    /// The index of a part's main parameter (R, C, L, `rs`, `rp`, gain, `gm`, the
    /// op-amp's gain, else its `gbw`), if it has one.
    pub fn main_param(&self, part: PartId) -> Option<usize> {
        self.main_param.get(part.index()).copied().flatten()
    }

    /// The branch-current unknown of a part, if it has one.
    pub fn branch(&self, part: PartId) -> Option<usize> {
        self.branch.get(part.index()).copied().flatten()
    }

    /// The independent sources' right-hand side patterns.
    pub fn sources(&self) -> &[SourceStamp] {
        &self.sources
    }

    /// Sets parameter `index` and refreshes the numeric matrices (no change of
    /// structure). The caller validates the value.
    pub fn set_param(&mut self, index: usize, value: f64) {
        if let Some(p) = self.params.get_mut(index) {
            p.value = value;
            self.refresh_numeric();
        }
    }

    /// The value of parameter `index`.
    pub fn param(&self, index: usize) -> f64 {
        self.params[index].value
    }

    /// Recomputes the dense numeric `G` and `C` from the pattern and the parameters.
    fn refresh_numeric(&mut self) {
        let System {
            entries,
            entry_slot,
            params,
            g,
            c,
            ..
        } = self;
        g.fill(0.0);
        c.fill(0.0);
        for (e, &slot) in entries.iter().zip(entry_slot.iter()) {
            let v = match e.coef {
                Coef::Const(v) => v,
                Coef::Param { index, scale } => scale * params[index].value,
                Coef::Reciprocal { index, scale } => scale / params[index].value,
            };
            let target = match e.matrix {
                Matrix::G => &mut *g,
                Matrix::C => &mut *c,
            };
            target[slot] += v;
        }
    }

    /// Writes `Y(jω) = G + jωC` into `y` as a dense column-major `dim × dim` matrix.
    ///
    /// # Panics
    /// If `y` does not have `dim²` elements (a programming error).
    pub fn fill_dense(&self, omega: f64, y: &mut [Complex64]) {
        assert_eq!(y.len(), self.dim * self.dim, "matrix buffer size");
        y.fill(Complex64::new(0.0, 0.0));
        for (j, col) in y
            .chunks_exact_mut(self.dim.max(1))
            .enumerate()
            .take(self.dim)
        {
            for k in self.col_ptr[j]..self.col_ptr[j + 1] {
                col[self.row_idx[k]] = Complex64::new(self.g[k], omega * self.c[k]);
            }
        }
    }

    /// `out = C · x`.
    pub(crate) fn c_times(&self, x: &[Complex64], out: &mut [Complex64]) {
        out.fill(Complex64::new(0.0, 0.0));
        for (j, &xj) in x.iter().enumerate() {
            if xj == Complex64::new(0.0, 0.0) {
                continue;
            }
            for k in self.col_ptr[j]..self.col_ptr[j + 1] {
                let c = self.c[k];
                if c != 0.0 {
                    out[self.row_idx[k]] += xj * c;
                }
            }
        }
    }
}
