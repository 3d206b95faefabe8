//! Graph checks that name the cause of a structurally singular system before any
//! numerics: floating nodes, current-source cut sets, loops of voltage sources (and
//! inductors at DC), and ideal op-amps without feedback.

use std::collections::VecDeque;

use rolloff_netlist::{Circuit, NodeId, PartKind};

use crate::error::MnaError;

struct Dsu {
    parent: Vec<usize>,
}

impl Dsu {
    fn new(n: usize) -> Dsu {
        Dsu {
            parent: (0..n).collect(),
        }
    }

    fn find(&mut self, mut x: usize) -> usize {
        while self.parent[x] != x {
            self.parent[x] = self.parent[self.parent[x]];
            x = self.parent[x];
        }
        x
    }

    fn union(&mut self, a: usize, b: usize) {
        let (ra, rb) = (self.find(a), self.find(b));
        if ra != rb {
            self.parent[ra.max(rb)] = ra.min(rb);
        }
    }
}

/// Runs every check for the AC system (`dc == false`) or the DC one.
pub(crate) fn check(circuit: &Circuit, dc: bool) -> Result<(), MnaError> {
    connectivity(circuit, dc)?;
    source_loops(circuit, dc)?;
    opamp_feedback(circuit, dc)
}

/// Whether the op-amp acts as a nullor: no `gain` and no `gbw`, or, at DC, no `gain`
/// (a `gbw`-only model has infinite gain at DC).
fn is_ideal_opamp(kind: &PartKind, dc: bool) -> bool {
    matches!(kind, PartKind::OpAmp { gain: None, gbw, .. } if gbw.is_none() || dc)
}

/// Every node must reach `gnd` through parts that define voltages (not only through
/// current sources, not only through controlling inputs).
fn connectivity(circuit: &Circuit, dc: bool) -> Result<(), MnaError> {
    let n = circuit.nodes.len();
    let mut dsu = Dsu::new(n);
    let mut current_edges = Vec::new();
    for (i, part) in circuit.parts.iter().enumerate() {
        match part.kind {
            PartKind::Resistor { a, b, .. } | PartKind::Inductor { a, b, .. } => {
                dsu.union(a.index(), b.index());
            }
            PartKind::Capacitor { a, b, .. } => {
                if !dc {
                    dsu.union(a.index(), b.index());
                }
            }
            PartKind::VoltageSource { pos, neg, .. } => dsu.union(pos.index(), neg.index()),
            PartKind::CurrentSource { from, to, rp, .. } => {
                if rp.is_some() {
                    dsu.union(from.index(), to.index());
                } else {
                    current_edges.push((from.index(), to.index(), i));
                }
            }
            PartKind::Vcvs {
                out_pos, out_neg, ..
            } => dsu.union(out_pos.index(), out_neg.index()),
            PartKind::Vccs {
                out_pos, out_neg, ..
            } => current_edges.push((out_pos.index(), out_neg.index(), i)),
            PartKind::OpAmp { out, .. } => dsu.union(out.index(), 0),
        }
    }
    let ground = dsu.find(0);
    let Some(first) = (1..n).find(|&i| dsu.find(i) != ground) else {
        return Ok(());
    };
    let root = dsu.find(first);
    let in_component: Vec<bool> = (0..n).map(|i| dsu.find(i) == root).collect();
    let nodes: Vec<String> = (0..n)
        .filter(|&i| in_component[i])
        .map(|i| circuit.nodes[i].clone())
        .collect();
    let mut parts: Vec<String> = current_edges
        .iter()
        .filter(|&&(a, b, _)| in_component[a] != in_component[b])
        .map(|&(_, _, p)| circuit.parts[p].name.clone())
        .collect();
    parts.dedup();
    if parts.is_empty() {
        Err(MnaError::FloatingNode {
            node: circuit.nodes[first].clone(),
            dc_only: dc,
        })
    } else {
        Err(MnaError::CurrentCutSet {
            parts,
            nodes,
            dc_only: dc,
        })
    }
}

/// Ideal voltage-defining branches must not close a loop.
fn source_loops(circuit: &Circuit, dc: bool) -> Result<(), MnaError> {
    let n = circuit.nodes.len();
    let mut dsu = Dsu::new(n);
    let mut adjacency: Vec<Vec<(usize, usize)>> = vec![Vec::new(); n];
    for (i, part) in circuit.parts.iter().enumerate() {
        let (a, b) = match part.kind {
            PartKind::VoltageSource {
                pos, neg, rs: None, ..
            } => (pos, neg),
            PartKind::Vcvs {
                out_pos, out_neg, ..
            } => (out_pos, out_neg),
            PartKind::OpAmp { out, .. } => (out, NodeId::GND),
            PartKind::Inductor { a, b, .. } if dc => (a, b),
            _ => continue,
        };
        let (a, b) = (a.index(), b.index());
        if dsu.find(a) == dsu.find(b) {
            // The loop's parts, in source order.
            let mut members = path_parts(&adjacency, a, b);
            members.push(i);
            members.sort_unstable();
            let parts = members
                .into_iter()
                .map(|p| circuit.parts[p].name.clone())
                .collect();
            return Err(MnaError::SourceLoop { parts, dc_only: dc });
        }
        dsu.union(a, b);
        adjacency[a].push((b, i));
        adjacency[b].push((a, i));
    }
    Ok(())
}

/// The parts on the (unique) forest path from `from` to `to`.
fn path_parts(adjacency: &[Vec<(usize, usize)>], from: usize, to: usize) -> Vec<usize> {
    let mut came: Vec<Option<(usize, usize)>> = vec![None; adjacency.len()];
    let mut seen = vec![false; adjacency.len()];
    let mut queue = VecDeque::from([from]);
    seen[from] = true;
    while let Some(v) = queue.pop_front() {
        if v == to {
            break;
        }
        for &(w, p) in &adjacency[v] {
            if !seen[w] {
                seen[w] = true;
                came[w] = Some((v, p));
                queue.push_back(w);
            }
        }
    }
    let mut parts = Vec::new();
    let mut v = to;
    while let Some((prev, p)) = came[v] {
        parts.push(p);
        v = prev;
    }
    parts.reverse();
    parts
}

/// Each ideal op-amp needs a path from its output to one of its inputs that does not
/// pass through `gnd` (through parts, or through other controlled sources' inputs and
/// outputs). At DC capacitors do not count.
fn opamp_feedback(circuit: &Circuit, dc: bool) -> Result<(), MnaError> {
    let n = circuit.nodes.len();
    for (k, part) in circuit.parts.iter().enumerate() {
        let PartKind::OpAmp {
            out,
            in_pos,
            in_neg,
            ..
        } = part.kind
        else {
            continue;
        };
        if !is_ideal_opamp(&part.kind, dc) {
            continue;
        }
        let mut adjacency: Vec<Vec<usize>> = vec![Vec::new(); n];
        let mut edge = |a: NodeId, b: NodeId| {
            if !a.is_ground() && !b.is_ground() {
                adjacency[a.index()].push(b.index());
                adjacency[b.index()].push(a.index());
            }
        };
        for (j, other) in circuit.parts.iter().enumerate() {
            match other.kind {
                PartKind::Resistor { a, b, .. } | PartKind::Inductor { a, b, .. } => edge(a, b),
                PartKind::Capacitor { a, b, .. } => {
                    if !dc {
                        edge(a, b);
                    }
                }
                PartKind::VoltageSource { pos, neg, .. } => edge(pos, neg),
                PartKind::CurrentSource {
                    from,
                    to,
                    rp: Some(_),
                    ..
                } => edge(from, to),
                PartKind::CurrentSource { .. } => {}
                PartKind::Vcvs {
                    out_pos,
                    out_neg,
                    in_pos,
                    in_neg,
                    ..
                } => {
                    edge(out_pos, out_neg);
                    for i in [in_pos, in_neg] {
                        edge(i, out_pos);
                        edge(i, out_neg);
                    }
                }
                PartKind::Vccs {
                    out_pos,
                    out_neg,
                    in_pos,
                    in_neg,
                    ..
                } => {
                    for i in [in_pos, in_neg] {
                        edge(i, out_pos);
                        edge(i, out_neg);
                    }
                }
                PartKind::OpAmp {
                    out: o,
                    in_pos: p,
                    in_neg: m,
                    ..
                } => {
                    if j != k {
                        edge(p, o);
                        edge(m, o);
                        edge(p, m);
                    }
                }
            }
        }
        let targets = [in_pos, in_neg];
        let reached = !out.is_ground() && reaches(&adjacency, out.index(), &targets);
        if !reached {
            return Err(if dc {
                MnaError::OpAmpNoDcFeedback {
                    part: part.name.clone(),
                }
            } else {
                MnaError::OpAmpNoFeedback {
                    part: part.name.clone(),
                }
            });
        }
    }
    Ok(())
}

fn reaches(adjacency: &[Vec<usize>], from: usize, targets: &[NodeId]) -> bool {
    let hit = |v: usize| targets.iter().any(|t| !t.is_ground() && t.index() == v);
    let mut seen = vec![false; adjacency.len()];
    let mut queue = VecDeque::from([from]);
    seen[from] = true;
    while let Some(v) = queue.pop_front() {
        if hit(v) {
            return true;
        }
        for &w in &adjacency[v] {
            if !seen[w] {
                seen[w] = true;
                queue.push_back(w);
            }
        }
    }
    false
}
