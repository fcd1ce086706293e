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

/// A path longer than this many barriers keeps only the barriers nearest the accessible
/// circuit, so that a long chain of circuits cannot make the report grow as its square.
pub const MAX_PATH_BARRIERS: usize = 64;

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PathInfo {
    /// Circuit ids from the hazardous circuit to the end of the path. Where barriers were
    /// omitted (`omitted_barriers` > 0), they lie between the first and second circuit.
    pub circuits: Vec<String>,
    /// Barrier ids along the path, one between each pair of circuits shown.
    pub barriers: Vec<String>,
    pub grades: Vec<Grade>,
    /// The path in words: `primary -[pri-sec: reinforced]- output`.
    pub description: String,
    /// Barriers of a long path left out after the hazardous circuit (0 for most paths).
    pub omitted_barriers: usize,
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
    /// How many hazardous circuits this entry stands for: those connected to the
    /// accessible circuit (the weakest path of all of them is shown), or, for an entry
    /// without a path, those with no declared barrier to it (the first is named).
    pub hazardous_count: usize,
}

/// One barrier as an edge of the structure.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StructureEdge {
    pub barrier: String,
    pub between: [String; 2],
    pub grade: Grade,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IsolationReport {
    pub protection_class: ProtectionClass,
    pub hazardous_count: usize,
    pub accessible_count: usize,
    /// At most two entries per accessible circuit: the weakest path to it from any
    /// hazardous circuit, and the hazardous circuits with no declared barrier to it.
    pub pairs: Vec<PairResult>,
    /// Hazardous/accessible pairs the entries stand for (hazardous times accessible).
    pub pair_count: u64,
    /// Of those, pairs with no declared barrier between them.
    pub pairs_without_barrier: u64,
    /// The circuit and barrier structure as a text tree, bounded in depth and size.
    pub diagram: String,
    /// Whether the text tree was cut short (depth or size); `structure` is complete.
    pub diagram_truncated: bool,
    /// The structure as data: every barrier as an edge between two circuit ids.
    pub structure: Vec<StructureEdge>,
    /// Under IEC 60601-1: the means of protection counted along the weakest path from the
    /// mains to each applied part (MOPP) and each other accessible circuit (MOOP); null
    /// under the other standards.
    pub means: Option<Vec<MeansPath>>,
}

/// The best known (level, barriers) to a circuit, with the barrier it was reached through
/// and the hazardous circuit the path starts at.
#[derive(Clone, Copy)]
struct Reached {
    level: u8,
    hops: usize,
    from: Option<(usize, usize)>,
    origin: usize,
}

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

    /// Weakest insulation level from any of `sources` to every circuit, in one search
    /// (the weakest from any source is the weakest of the searches from each); among
    /// equally weak paths, the one with the fewest barriers. Circuits in `stop_at` that
    /// are not sources are reached but not passed through.
    fn weakest(&self, sources: &[usize], stop_at: &[bool]) -> Vec<Option<Reached>> {
        self.weakest_by(sources, stop_at, |b| level_of(b.grade))
    }

    /// `weakest` with what one barrier adds to a path given by `adds` (an insulation level,
    /// or a count of means of protection), capped at two.
    fn weakest_by(
        &self,
        sources: &[usize],
        stop_at: &[bool],
        adds: impl Fn(&crate::project::Barrier) -> u8,
    ) -> Vec<Option<Reached>> {
        let n = self.adjacent.len();
        let mut best: Vec<Option<Reached>> = vec![None; n];
        let mut is_source = vec![false; n];
        let mut queue = BinaryHeap::new();
        for &s in sources {
            is_source[s] = true;
            best[s] = Some(Reached {
                level: 0,
                hops: 0,
                from: None,
                origin: s,
            });
            queue.push(Reverse((0u8, 0usize, s)));
        }
        while let Some(Reverse((l, hops, node))) = queue.pop() {
            if best[node].is_some_and(|b| (l, hops) > (b.level, b.hops)) {
                continue;
            }
            if !is_source[node] && stop_at[node] {
                continue;
            }
            let origin = best[node].map_or(node, |b| b.origin);
            for &(next, b) in &self.adjacent[node] {
                let through = (
                    (l + adds(&self.project.barriers[b])).min(LEVEL_DOUBLE),
                    hops + 1,
                );
                if best[next].is_none_or(|known| through < (known.level, known.hops)) {
                    best[next] = Some(Reached {
                        level: through.0,
                        hops: through.1,
                        from: Some((node, b)),
                        origin,
                    });
                    queue.push(Reverse((through.0, through.1, next)));
                }
            }
        }
        best
    }

    /// The path the search found to `target`, keeping at most `MAX_PATH_BARRIERS` of its
    /// barriers (those nearest the target), so that building it costs no more than that.
    fn path_to(&self, target: usize, best: &[Option<Reached>]) -> PathInfo {
        let circuits = &self.project.circuits;
        let barriers = &self.project.barriers;
        let mut nodes = vec![target];
        let mut edges = Vec::new();
        let mut at = target;
        let total = best[target].map_or(0, |r| r.hops);
        let origin = best[target].map_or(target, |r| r.origin);
        while edges.len() < MAX_PATH_BARRIERS.min(total) {
            let Some((prev, b)) = best[at].and_then(|r| r.from) else {
                break;
            };
            edges.push(b);
            nodes.push(prev);
            at = prev;
        }
        let omitted_barriers = total.saturating_sub(edges.len());
        if omitted_barriers > 0 {
            nodes.push(origin);
        }
        nodes.reverse();
        edges.reverse();
        let mut description = circuits[nodes[0]].id.clone();
        let shown = if omitted_barriers > 0 {
            &nodes[1..]
        } else {
            &nodes[..]
        };
        if omitted_barriers > 0 {
            description.push_str(&format!(
                " -[... {omitted_barriers} barriers not shown ...]- {}",
                circuits[shown[0]].id
            ));
        }
        for (i, b) in edges.iter().enumerate() {
            description.push_str(&format!(
                " -[{}: {}]- {}",
                barriers[*b].id,
                barriers[*b].grade.as_str(),
                circuits[shown[i + 1]].id
            ));
        }
        PathInfo {
            circuits: nodes.iter().map(|&i| circuits[i].id.clone()).collect(),
            barriers: edges.iter().map(|&b| barriers[b].id.clone()).collect(),
            grades: edges.iter().map(|&b| barriers[b].grade).collect(),
            description,
            omitted_barriers,
        }
    }

    /// Connected components of the whole graph: a component number per circuit.
    fn components(&self) -> Vec<usize> {
        let n = self.adjacent.len();
        let mut comp = vec![usize::MAX; n];
        let mut next = 0;
        for start in 0..n {
            if comp[start] != usize::MAX {
                continue;
            }
            comp[start] = next;
            let mut stack = vec![start];
            while let Some(node) = stack.pop() {
                for &(m, _) in &self.adjacent[node] {
                    if comp[m] == usize::MAX {
                        comp[m] = next;
                        stack.push(m);
                    }
                }
            }
            next += 1;
        }
        comp
    }

    /// For every circuit, the earthed circuit nearest to it (fewest barriers, not passing
    /// another earthed circuit) among `candidates`: one breadth-first search from all of
    /// them at once.
    fn nearest_earthed(&self, earthed: &[bool], candidates: &[bool]) -> Vec<Option<usize>> {
        let n = self.adjacent.len();
        let mut nearest = vec![None; n];
        let mut queue = VecDeque::new();
        for e in 0..n {
            if earthed[e] && candidates[e] {
                nearest[e] = Some(e);
                queue.push_back(e);
            }
        }
        while let Some(node) = queue.pop_front() {
            for &(next, _) in &self.adjacent[node] {
                if nearest[next].is_none() && !earthed[next] {
                    nearest[next] = nearest[node];
                    queue.push_back(next);
                }
            }
        }
        nearest
    }
}

/// Judges every accessible circuit against every hazardous circuit without enumerating
/// the pairs: one search from all hazardous circuits at once gives, for each accessible
/// circuit, its weakest path from any of them; connected components count the hazardous
/// circuits with no declared barrier to it. Work and output grow with the design, not
/// with hazardous times accessible circuits.
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
    let best = graph.weakest(&hazardous, &earthed);
    let comp = graph.components();
    // Per component: how many hazardous circuits, and the first of them.
    let mut hazardous_in = HashMap::<usize, (usize, usize)>::new();
    for &h in &hazardous {
        hazardous_in.entry(comp[h]).or_insert((0, h)).0 += 1;
    }
    // The first hazardous circuit, and the first in another component than it: between
    // them they name a hazardous circuit outside any given component in constant time.
    let first = hazardous.first().copied();
    let first_elsewhere =
        first.and_then(|f| hazardous.iter().copied().find(|&h| comp[h] != comp[f]));
    let outside = |c: usize| match first {
        Some(f) if comp[f] != c => Some(f),
        _ => first_elsewhere,
    };
    let reached: Vec<bool> = best.iter().map(Option::is_some).collect();
    let nearest = if class == ProtectionClass::I {
        graph.nearest_earthed(&earthed, &reached)
    } else {
        vec![None; circuits.len()]
    };
    let ctx = Judge {
        graph: &graph,
        best: &best,
    };
    let mut pairs = Vec::new();
    let mut pairs_without_barrier = 0u64;
    for &a in &accessible {
        let (connected, first_connected) = hazardous_in.get(&comp[a]).copied().unwrap_or((0, a));
        let apart = hazardous.len() - connected;
        pairs_without_barrier += apart as u64;
        if matches!(
            circuits[a].kind,
            CircuitKind::Mains | CircuitKind::Hazardous
        ) {
            let path = PathInfo {
                circuits: vec![circuits[a].id.clone()],
                barriers: Vec::new(),
                grades: Vec::new(),
                description: format!("{} (hazardous and accessible)", circuits[a].id),
                omitted_barriers: 0,
            };
            pairs.push(ctx.entry(a, a, Some(path), 0, LEVEL_DOUBLE, None, connected));
        } else if let Some(r) = best[a] {
            let path = graph.path_to(a, &best);
            let (needs, earth) = if earthed[a] {
                (1, Some(a))
            } else {
                (LEVEL_DOUBLE, None)
            };
            pairs.push(ctx.entry(r.origin, a, Some(path), r.level, needs, earth, connected));
            // Class I: the earth that holds `a` is judged too where it is weakly insulated.
            if let Some(e) = nearest[a].filter(|&e| e != a)
                && best[e].is_some_and(|r| r.level < 1)
            {
                pairs.push(ctx.earth_entry(a, e, connected));
            }
        } else if connected > 0 {
            match nearest[a] {
                Some(e) => pairs.push(ctx.earth_entry(a, e, connected)),
                None => {
                    pairs.push(ctx.entry(
                        first_connected,
                        a,
                        None,
                        0,
                        LEVEL_DOUBLE,
                        None,
                        connected,
                    ));
                }
            }
        }
        if apart > 0
            && let Some(h) = outside(comp[a])
        {
            pairs.push(ctx.entry(h, a, None, 0, LEVEL_DOUBLE, None, apart));
        }
    }
    let (diagram, diagram_truncated) = diagram(project, &graph);
    IsolationReport {
        protection_class: class,
        hazardous_count: hazardous.len(),
        accessible_count: accessible.len(),
        pairs,
        pair_count: hazardous.len() as u64 * accessible.len() as u64,
        pairs_without_barrier,
        diagram,
        diagram_truncated,
        structure: project
            .barriers
            .iter()
            .map(|b| StructureEdge {
                barrier: b.id.clone(),
                between: b.between.clone(),
                grade: b.grade,
            })
            .collect(),
        means: (project.design.standard == Some(crate::standards::Standard::Iec60601))
            .then(|| means_paths(project, &graph)),
    }
}

/// IEC 60601-1: the means of protection along the weakest path from a mains circuit to a
/// circuit a patient or an operator touches.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeansPath {
    /// The mains circuit the weakest path starts at.
    pub mains: String,
    /// The applied part or accessible circuit.
    pub circuit: String,
    pub applied_part: bool,
    /// What is counted: "mopp" (toward an applied part) or "moop" (toward another
    /// accessible circuit; a means of patient protection counts as one of operator
    /// protection too).
    pub counts: &'static str,
    /// Means counted along the weakest path (two at most: more adds nothing asked for).
    pub provides: u8,
    /// Means needed: 2, or 1 toward an accessible circuit held at protective earth (Class I).
    pub needs: u8,
    /// The earthed circuit the protection relies on (1 MOOP plus protective earth).
    pub earth: Option<String>,
    pub path: PathInfo,
    /// The path with each barrier's means of protection: `ac-input -[in-out: 2-mopp]- output`.
    pub description: String,
    /// What the path provides and what is needed, in words.
    pub provides_words: String,
    pub needs_words: String,
}

/// Means of patient protection a barrier adds to a path: only MOPP count.
fn mopp_of(barrier: &crate::project::Barrier) -> u8 {
    barrier
        .means
        .filter(|m| m.for_patient())
        .map_or(0, crate::standards::Means::count)
}

/// Means of operator protection a barrier adds to a path: a MOPP counts as a MOOP too.
fn moop_of(barrier: &crate::project::Barrier) -> u8 {
    barrier.means.map_or(0, crate::standards::Means::count)
}

/// Counts the means of protection (IEC 60601-1) from every mains circuit at once: an
/// applied part needs 2 MOPP; another accessible circuit 2 MOOP, or 1 MOOP where it is
/// held at protective earth (Class I). A path through a circuit held at earth ends there for
/// MOOP, as for the insulation levels; protective earth is not counted as a MOPP (the
/// issue's rule; from memory of IEC 60601-1: verify). Circuits no mains circuit reaches
/// through declared barriers are left to `isolation.no_barrier`; a mains circuit that is
/// itself accessible to `isolation.insufficient`.
fn means_paths(project: &Project, graph: &Graph) -> Vec<MeansPath> {
    let circuits = &project.circuits;
    let mains: Vec<usize> = (0..circuits.len())
        .filter(|&i| circuits[i].kind == CircuitKind::Mains)
        .collect();
    let class_i = project.design.protection_class == ProtectionClass::I;
    let earthed: Vec<bool> = circuits.iter().map(|c| class_i && c.earthed).collect();
    let mopp = graph.weakest_by(&mains, &vec![false; circuits.len()], mopp_of);
    let moop = graph.weakest_by(&mains, &earthed, moop_of);
    let reached: Vec<bool> = moop.iter().map(Option::is_some).collect();
    let nearest = if class_i {
        graph.nearest_earthed(&earthed, &reached)
    } else {
        vec![None; circuits.len()]
    };
    let barriers: HashMap<&str, &crate::project::Barrier> = project
        .barriers
        .iter()
        .map(|b| (b.id.as_str(), b))
        .collect();
    let mut out = Vec::new();
    for (a, c) in circuits.iter().enumerate() {
        if c.kind == CircuitKind::Mains || !(c.applied_part || c.accessible) {
            continue;
        }
        let (best, counts, needs, earth) = if c.applied_part {
            (&mopp, "mopp", LEVEL_DOUBLE, None)
        } else if earthed[a] {
            (&moop, "moop", 1, Some(a))
        } else if moop[a].is_some() {
            (&moop, "moop", LEVEL_DOUBLE, None)
        } else {
            // Reached only through a circuit held at earth: 1 MOOP to that circuit.
            match nearest[a] {
                Some(e) => (&moop, "moop", 1, Some(e)),
                None => continue,
            }
        };
        let target = earth.unwrap_or(a);
        let Some(r) = best[target] else {
            continue;
        };
        let word = if counts == "mopp" { "MOPP" } else { "MOOP" };
        let path = graph.path_to(target, best);
        let description = means_description(&barriers, &path);
        out.push(MeansPath {
            mains: circuits[r.origin].id.clone(),
            circuit: c.id.clone(),
            applied_part: c.applied_part,
            counts,
            provides: r.level,
            needs,
            earth: earth.map(|e| circuits[e].id.clone()),
            path,
            description,
            provides_words: format!("{} {word}", r.level),
            needs_words: match earth {
                Some(e) => format!("1 {word} to {}, held at protective earth", circuits[e].id),
                None => format!("{needs} {word}"),
            },
        });
    }
    out
}

/// A path in words with each barrier's means of protection (its grade where it has none).
fn means_description(
    barriers: &HashMap<&str, &crate::project::Barrier>,
    path: &PathInfo,
) -> String {
    if path.omitted_barriers > 0 {
        return path.description.clone();
    }
    let mut out = path.circuits.first().cloned().unwrap_or_default();
    for (id, next) in path.barriers.iter().zip(path.circuits.iter().skip(1)) {
        let word = barriers.get(id.as_str()).map_or("?", |b| {
            b.means
                .map_or(b.grade.as_str(), crate::standards::Means::as_str)
        });
        out.push_str(&format!(" -[{id}: {word}]- {next}"));
    }
    out
}

struct Judge<'g, 'p> {
    graph: &'g Graph<'p>,
    best: &'g [Option<Reached>],
}

impl Judge<'_, '_> {
    /// The entry for an accessible circuit `a` held at earth by `e` (Class I): basic
    /// insulation from the hazardous side to `e` is needed.
    fn earth_entry(&self, a: usize, e: usize, connected: usize) -> PairResult {
        let r = self.best[e];
        let path = r.map(|_| self.graph.path_to(e, self.best));
        let origin = r.map_or(e, |r| r.origin);
        let level = r.map_or(0, |r| r.level);
        self.entry(origin, a, path, level, 1, Some(e), connected)
    }

    #[allow(clippy::too_many_arguments)]
    fn entry(
        &self,
        h: usize,
        a: usize,
        path: Option<PathInfo>,
        provides_level: u8,
        needs_level: u8,
        earth: Option<usize>,
        hazardous_count: usize,
    ) -> PairResult {
        let circuits = &self.graph.project.circuits;
        let provides = match &path {
            None => "nothing declared".to_string(),
            Some(p) if p.barriers.is_empty() => {
                "nothing: the circuit is itself accessible".to_string()
            }
            Some(p) => {
                let mut grades = p
                    .grades
                    .iter()
                    .map(|g| g.as_str())
                    .collect::<Vec<_>>()
                    .join(" + ");
                if p.omitted_barriers > 0 {
                    grades.push_str(&format!(" and {} more barriers", p.omitted_barriers));
                }
                format!("{} ({grades})", level_words(provides_level))
            }
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
            hazardous_count,
        }
    }
}

/// The text tree draws circuits at most this many barriers below each root; deeper ones
/// are counted, not drawn (a chain would otherwise indent each line further).
pub const MAX_DIAGRAM_DEPTH: usize = 24;
/// The text tree stops at about this many bytes; the JSON `structure` is complete.
pub const MAX_DIAGRAM_BYTES: usize = 64 * 1024;
/// A circuit or barrier id is cut to this many characters in the drawing.
const MAX_LABEL_CHARS: usize = 60;

/// The structure as a text tree: hazardous circuits first, each barrier drawn once,
/// bounded in depth and size. Returns the drawing and whether it was cut short.
fn diagram(project: &Project, graph: &Graph) -> (String, bool) {
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
    let comp = graph.components();
    let mut comp_drawn = vec![false; circuits.len()];
    let mut placed = vec![false; circuits.len()];
    let mut drawn = vec![false; project.barriers.len()];
    let mut out = String::new();
    let mut truncated = false;
    'roots: for root in order {
        if placed[root] || comp_drawn[comp[root]] {
            continue;
        }
        comp_drawn[comp[root]] = true;
        placed[root] = true;
        out.push_str(&label(root));
        out.push('\n');
        // Depth-first with an explicit stack of edges still to draw: (barrier, circuit at
        // its far end, prefix, last among its siblings, depth). Each line is drawn when
        // popped, so a circuit's subtree follows its own line.
        let mut stack: Vec<(usize, usize, String, bool, usize)> = Vec::new();
        let push_children =
            |node: usize,
             prefix: &str,
             depth: usize,
             drawn: &mut Vec<bool>,
             stack: &mut Vec<(usize, usize, String, bool, usize)>| {
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
                    stack.push((b, next, prefix.to_string(), k + 1 == count, depth));
                }
            };
        push_children(root, "", 1, &mut drawn, &mut stack);
        while let Some((b, next, prefix, last, depth)) = stack.pop() {
            if out.len() > MAX_DIAGRAM_BYTES {
                truncated = true;
                out.push_str(
                    "... (the drawing stops here; the JSON report's isolation.structure lists every barrier)\n",
                );
                break 'roots;
            }
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
                if depth >= MAX_DIAGRAM_DEPTH {
                    if graph.adjacent[next].iter().any(|&(_, b)| !drawn[b]) {
                        truncated = true;
                        out.push_str(&format!(
                            "{child_prefix}└─ ... (deeper than {MAX_DIAGRAM_DEPTH} barriers: not drawn)\n"
                        ));
                    }
                } else {
                    push_children(next, &child_prefix, depth + 1, &mut drawn, &mut stack);
                }
            }
        }
    }
    (out, truncated)
}

/// Strips characters that would break the drawing (line breaks, backticks, controls).
fn clean(text: &str) -> String {
    let mut out: String = text
        .chars()
        .take(MAX_LABEL_CHARS)
        .map(|c| if c.is_control() || c == '`' { ' ' } else { c })
        .collect();
    if text.chars().nth(MAX_LABEL_CHARS).is_some() {
        out.push_str("...");
    }
    out
}
