//! Isolation paths: circuits are nodes, barriers are edges carrying their grade. For every
//! hazardous circuit and every accessible circuit, the weakest path between them is found
//! by a shortest-path search over insulation levels (never by enumerating paths), and set
//! beside what the protection class needs.

use std::cmp::Reverse;
use std::collections::{BinaryHeap, HashMap, VecDeque};

use serde::Serialize;

use crate::project::{CircuitKind, Grade, Project, ProtectionClass};

/// Insulation levels: none, basic (one layer), double or reinforced (two). More than two
/// in series adds nothing the protection classes ask for.
pub const LEVEL_DOUBLE: u8 = 2;

/// The level one barrier adds to a path.
pub fn level_of(grade: Grade) -> u8 {
    match grade {
        Grade::Functional => 0,
        Grade::Basic | Grade::Supplementary => 1,
        Grade::Reinforced | Grade::Double => 2,
    }
}

fn level_words(level: u8) -> &'static str {
    match level {
        0 => "no protective insulation",
        1 => "basic insulation",
        _ => "double or reinforced insulation",
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PathInfo {
    /// Circuit ids from the hazardous circuit to the end of the path.
    pub circuits: Vec<String>,
    /// Barrier ids along the path, one between each pair of circuits.
    pub barriers: Vec<String>,
    pub grades: Vec<Grade>,
    /// The path in words: `primary -[pri-sec: reinforced]- output`.
    pub description: String,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PairResult {
    pub hazardous: String,
    pub accessible: String,
    pub accessible_earthed: bool,
    /// The weakest path; null when no declared barrier connects the two circuits.
    pub path: Option<PathInfo>,
    pub provides_level: u8,
    pub provides: String,
    pub needs_level: u8,
    pub needs: String,
    /// The earthed circuit whose protective earth the protection relies on (Class I).
    pub earth: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IsolationReport {
    pub protection_class: ProtectionClass,
    pub hazardous_count: usize,
    pub accessible_count: usize,
    pub pairs: Vec<PairResult>,
    /// The circuit and barrier structure as a text tree.
    pub diagram: String,
}

/// A search from one hazardous circuit: the weakest level reaching each circuit, and the
/// (circuit, barrier) it was reached from.
type Search = (Vec<Option<u8>>, Vec<Option<(usize, usize)>>);

/// The graph of a project: adjacency lists of (neighbour, barrier index).
struct Graph<'p> {
    project: &'p Project,
    adjacent: Vec<Vec<(usize, usize)>>,
}

impl<'p> Graph<'p> {
    fn new(project: &'p Project) -> Self {
        let by_id: HashMap<&str, usize> = project
            .circuits
            .iter()
            .enumerate()
            .map(|(i, c)| (c.id.as_str(), i))
            .collect();
        let index = |id: &str| by_id.get(id).copied();
        let mut adjacent = vec![Vec::new(); project.circuits.len()];
        for (b, barrier) in project.barriers.iter().enumerate() {
            if let (Some(x), Some(y)) = (index(&barrier.between[0]), index(&barrier.between[1])) {
                adjacent[x].push((y, b));
                adjacent[y].push((x, b));
            }
        }
        Graph { project, adjacent }
    }

    /// Weakest insulation level from `source` to every circuit, with the predecessor on
    /// the weakest path; among equally weak paths, the one with the fewest barriers.
    /// Circuits in `stop_at` are reached but not passed through.
    fn weakest(&self, source: usize, stop_at: &[bool]) -> Search {
        let n = self.adjacent.len();
        let mut best: Vec<Option<(u8, usize)>> = vec![None; n];
        let mut before: Vec<Option<(usize, usize)>> = vec![None; n];
        let mut queue = BinaryHeap::new();
        best[source] = Some((0, 0));
        queue.push(Reverse((0u8, 0usize, source)));
        while let Some(Reverse((l, hops, node))) = queue.pop() {
            if best[node].is_some_and(|b| (l, hops) > b) {
                continue;
            }
            if node != source && stop_at[node] {
                continue;
            }
            for &(next, b) in &self.adjacent[node] {
                let through = (
                    (l + level_of(self.project.barriers[b].grade)).min(LEVEL_DOUBLE),
                    hops + 1,
                );
                if best[next].is_none_or(|known| through < known) {
                    best[next] = Some(through);
                    before[next] = Some((node, b));
                    queue.push(Reverse((through.0, through.1, next)));
                }
            }
        }
        (best.iter().map(|b| b.map(|(l, _)| l)).collect(), before)
    }

    fn path_to(&self, source: usize, target: usize, before: &[Option<(usize, usize)>]) -> PathInfo {
        let circuits = &self.project.circuits;
        let barriers = &self.project.barriers;
        let mut nodes = vec![target];
        let mut edges = Vec::new();
        let mut at = target;
        // Each step moves to a circuit settled earlier; the bound only guards the loop.
        while at != source && edges.len() <= circuits.len() {
            let Some((prev, b)) = before[at] else { break };
            edges.push(b);
            nodes.push(prev);
            at = prev;
        }
        nodes.reverse();
        edges.reverse();
        let mut description = circuits[nodes[0]].id.clone();
        for (i, b) in edges.iter().enumerate() {
            description.push_str(&format!(
                " -[{}: {}]- {}",
                barriers[*b].id,
                barriers[*b].grade.as_str(),
                circuits[nodes[i + 1]].id
            ));
        }
        PathInfo {
            circuits: nodes.iter().map(|&i| circuits[i].id.clone()).collect(),
            barriers: edges.iter().map(|&b| barriers[b].id.clone()).collect(),
            grades: edges.iter().map(|&b| barriers[b].grade).collect(),
            description,
        }
    }
}

/// Judges every pair of a hazardous and an accessible circuit.
pub fn analyse(project: &Project) -> IsolationReport {
    let graph = Graph::new(project);
    let circuits = &project.circuits;
    let class = project.design.protection_class;
    let hazardous: Vec<usize> = (0..circuits.len())
        .filter(|&i| {
            matches!(
                circuits[i].kind,
                CircuitKind::Mains | CircuitKind::Hazardous
            )
        })
        .collect();
    let accessible: Vec<usize> = (0..circuits.len())
        .filter(|&i| circuits[i].accessible)
        .collect();
    // Only Class I relies on protective earth: there an earthed circuit ends a path.
    let earthed: Vec<bool> = circuits
        .iter()
        .map(|c| class == ProtectionClass::I && c.earthed)
        .collect();
    let no_stop = vec![false; circuits.len()];
    let mut pairs = Vec::new();
    for &h in &hazardous {
        let (level, before) = graph.weakest(h, &earthed);
        let reach = (class == ProtectionClass::I).then(|| graph.weakest(h, &no_stop));
        for &a in &accessible {
            pairs.push(judge_pair(
                &graph,
                h,
                a,
                &level,
                &before,
                reach.as_ref(),
                &earthed,
            ));
        }
    }
    IsolationReport {
        protection_class: class,
        hazardous_count: hazardous.len(),
        accessible_count: accessible.len(),
        pairs,
        diagram: diagram(project, &graph),
    }
}

fn judge_pair(
    graph: &Graph,
    h: usize,
    a: usize,
    level: &[Option<u8>],
    before: &[Option<(usize, usize)>],
    reach: Option<&Search>,
    earthed: &[bool],
) -> PairResult {
    let circuits = &graph.project.circuits;
    let pair = |path: Option<PathInfo>,
                provides_level: u8,
                needs_level: u8,
                earth: Option<usize>| {
        let grades = path.as_ref().map(|p| {
            p.grades
                .iter()
                .map(|g| g.as_str())
                .collect::<Vec<_>>()
                .join(" + ")
        });
        let provides = match (&path, grades) {
            (None, _) => "nothing declared".to_string(),
            (Some(p), _) if p.barriers.is_empty() => {
                "nothing: the circuit is itself accessible".to_string()
            }
            (Some(_), Some(g)) => format!("{} ({g})", level_words(provides_level)),
            (Some(_), None) => level_words(provides_level).to_string(),
        };
        let needs = match (needs_level, earth) {
            (1, Some(e)) => format!("basic insulation to the earthed circuit {}", circuits[e].id),
            (l, _) => level_words(l).to_string(),
        };
        PairResult {
            hazardous: circuits[h].id.clone(),
            accessible: circuits[a].id.clone(),
            accessible_earthed: circuits[a].earthed,
            path,
            provides_level,
            provides,
            needs_level,
            needs,
            earth: earth.map(|e| circuits[e].id.clone()),
        }
    };
    if h == a {
        let path = PathInfo {
            circuits: vec![circuits[h].id.clone()],
            barriers: Vec::new(),
            grades: Vec::new(),
            description: format!("{} (hazardous and accessible)", circuits[h].id),
        };
        return pair(Some(path), 0, LEVEL_DOUBLE, None);
    }
    if earthed[a] {
        // Class I, earthed accessible circuit: basic insulation to it is enough.
        return match level[a] {
            Some(l) => pair(Some(graph.path_to(h, a, before)), l, 1, Some(a)),
            None => pair(None, 0, 1, Some(a)),
        };
    }
    if let Some(l) = level[a] {
        return pair(Some(graph.path_to(h, a, before)), l, LEVEL_DOUBLE, None);
    }
    // Class I: every path to `a` passes an earthed circuit; the one nearest to `a` holds it
    // at earth, and needs basic insulation from the hazardous circuit.
    if let Some((full_level, _)) = reach
        && full_level[a].is_some()
        && let Some(e) = nearest_earthed(graph, a, earthed, level)
    {
        let l = level[e].unwrap_or(0);
        return pair(Some(graph.path_to(h, e, before)), l, 1, Some(e));
    }
    pair(None, 0, LEVEL_DOUBLE, None)
}

/// The earthed circuit reached from `a` in the fewest barriers that the hazardous search
/// also reached.
fn nearest_earthed(
    graph: &Graph,
    a: usize,
    earthed: &[bool],
    level: &[Option<u8>],
) -> Option<usize> {
    let mut seen = vec![false; graph.adjacent.len()];
    let mut queue = VecDeque::from([a]);
    seen[a] = true;
    while let Some(node) = queue.pop_front() {
        if earthed[node] && level[node].is_some() {
            return Some(node);
        }
        if earthed[node] {
            continue;
        }
        for &(next, _) in &graph.adjacent[node] {
            if !seen[next] {
                seen[next] = true;
                queue.push_back(next);
            }
        }
    }
    None
}

/// The structure as a text tree: hazardous circuits first, each barrier drawn once.
fn diagram(project: &Project, graph: &Graph) -> String {
    let circuits = &project.circuits;
    let label = |i: usize| {
        let c = &circuits[i];
        let mut tags = vec![match c.kind {
            CircuitKind::Mains => "mains",
            CircuitKind::Hazardous => "hazardous",
            CircuitKind::Safe => "safe",
        }];
        if c.accessible {
            tags.push("accessible");
        }
        if c.earthed {
            tags.push("earthed");
        }
        format!("{} [{}]", clean(&c.id), tags.join(", "))
    };
    let mut order: Vec<usize> = (0..circuits.len())
        .filter(|&i| circuits[i].kind != CircuitKind::Safe)
        .collect();
    order.extend((0..circuits.len()).filter(|&i| circuits[i].kind == CircuitKind::Safe));
    let mut placed = vec![false; circuits.len()];
    let mut drawn = vec![false; project.barriers.len()];
    let mut out = String::new();
    for root in order {
        if placed[root] {
            continue;
        }
        placed[root] = true;
        out.push_str(&label(root));
        out.push('\n');
        // Depth-first with an explicit stack of edges still to draw: (barrier, circuit at
        // its far end, prefix, last among its siblings). Each line is drawn when popped,
        // so a circuit's subtree follows its own line.
        let mut stack: Vec<(usize, usize, String, bool)> = Vec::new();
        let push_children =
            |node: usize,
             prefix: &str,
             drawn: &mut Vec<bool>,
             stack: &mut Vec<(usize, usize, String, bool)>| {
                let edges: Vec<(usize, usize)> = graph.adjacent[node]
                    .iter()
                    .copied()
                    .filter(|&(_, b)| !drawn[b])
                    .collect();
                for &(_, b) in &edges {
                    drawn[b] = true;
                }
                let count = edges.len();
                for (k, &(next, b)) in edges.iter().enumerate().rev() {
                    stack.push((b, next, prefix.to_string(), k + 1 == count));
                }
            };
        push_children(root, "", &mut drawn, &mut stack);
        while let Some((b, next, prefix, last)) = stack.pop() {
            let barrier = &project.barriers[b];
            let branch = if last { "└─ " } else { "├─ " };
            let seen = if placed[next] { " (drawn above)" } else { "" };
            out.push_str(&format!(
                "{prefix}{branch}{} ({}) ─ {}{seen}\n",
                clean(&barrier.id),
                barrier.grade.as_str(),
                label(next)
            ));
            if !placed[next] {
                placed[next] = true;
                let child_prefix = format!("{prefix}{}", if last { "   " } else { "│  " });
                push_children(next, &child_prefix, &mut drawn, &mut stack);
            }
        }
    }
    out
}

/// Strips characters that would break the drawing (line breaks, backticks, controls).
fn clean(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() || c == '`' { ' ' } else { c })
        .collect()
}
