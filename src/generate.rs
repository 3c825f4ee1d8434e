//! Model generators: parametric cable nets and lattice domes written out as
//! model files (TOML, with the node and member tables moved to CSV files when
//! the model is large).
//!
//! Generators never panic: options are checked first and every problem is
//! returned as a lower-case message. Numbers are written with Rust's shortest
//! round-trip formatting, so reading a generated file gives back exactly the
//! coordinates and prestresses that were computed here.

use std::fmt::{self, Write as _};

/// Largest number of nodes a generator will produce.
pub const MAX_GENERATED_NODES: usize = 4_000_000;

/// How the boundary of a saddle net is held.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum NetEdge {
    /// Boundary nodes are supported in x, y and z.
    Fixed,
    /// Boundary nodes are free, each tied to the ground by three springs
    /// (x, y and z) of stiffness `k`, N/m.
    Elastic { k: f64 },
}

/// The generated reference load (downward, −z).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Loading {
    /// A load on the plan, N/m², lumped to the nodes by tributary plan area:
    /// each plan cell (a rectangle of the net, a triangle of the dome) gives
    /// every corner an equal share of its area, which is the consistent load
    /// of a uniform pressure on a bilinear rectangle (A/4 per corner) or a
    /// linear triangle (A/3 per corner), since ∫N_i dA is A/4 resp. A/3
    /// (derived). Shares that fall on supported nodes go straight to the
    /// supports and are not written; so the free nodes carry the pressure on
    /// the plan less a strip half a cell wide along the supports, and
    /// refining the grid leaves the total load (almost) unchanged.
    Plan(f64),
    /// The same force on every free node, N (the total grows with the
    /// number of nodes).
    PerNode(f64),
}

impl Loading {
    /// 600 N/m² on the plan: a light snow load (common practice, no source).
    pub const DEFAULT: Loading = Loading::Plan(600.0);

    fn check(self) -> Result<(), String> {
        match self {
            Loading::Plan(p) => finite("load", p),
            Loading::PerNode(f) => finite("node load", f),
        }
    }

    /// The downward force on each node (0 on supported nodes), given the
    /// nodes' tributary plan areas.
    fn forces(self, areas: &[f64], fixed: &[bool]) -> Vec<f64> {
        areas
            .iter()
            .zip(fixed)
            .map(|(&a, &f)| match (f, self) {
                (true, _) => 0.0,
                (false, Loading::Plan(p)) => p * a,
                (false, Loading::PerNode(n)) => n,
            })
            .collect()
    }

    fn describe(self) -> String {
        match self {
            Loading::Plan(p) => format!("load = {} N/m2 on the plan, spread by tributary plan area", num(p)),
            Loading::PerNode(f) => format!("load = {} N per free node", num(f)),
        }
    }
}

/// Tributary plan areas of the nodes: every cell (its corner nodes and its
/// plan area) gives each corner an equal share (see [`Loading::Plan`]).
fn tributary_areas<'a>(n_nodes: usize, cells: impl Iterator<Item = (&'a [usize], f64)>) -> Vec<f64> {
    let mut area = vec![0.0; n_nodes];
    for (corners, a) in cells {
        let share = a / corners.len() as f64;
        for &k in corners {
            area[k] += share;
        }
    }
    area
}

/// Options of [`saddle_net`].
#[derive(Clone, Debug, PartialEq)]
pub struct NetOptions {
    /// Nodes along x (at least 3).
    pub nx: usize,
    /// Nodes along y (at least 3).
    pub ny: usize,
    /// Plan size along x, m.
    pub span_x: f64,
    /// Plan size along y, m.
    pub span_y: f64,
    /// Saddle height parameter, m: z = rise·(u² − v²)/2 with u, v the plan
    /// coordinates scaled to [−1, 1].
    pub rise: f64,
    /// Cable force per length, N/m. With nx = ny it is used in both
    /// directions; otherwise it is the geometric mean of the two directions'
    /// force densities (see [`saddle_net`]).
    pub force_density: f64,
    /// Axial rigidity of the cables, N.
    pub ea: f64,
    /// Downward reference load on the nodes that have no support.
    pub load: Loading,
    pub edge: NetEdge,
    /// Node and member tables go to CSV files when the net has more nodes
    /// than this.
    pub csv_threshold: usize,
}

impl Default for NetOptions {
    fn default() -> Self {
        NetOptions {
            nx: 11,
            ny: 11,
            span_x: 20.0,
            span_y: 20.0,
            rise: 2.0,
            force_density: 2000.0,
            ea: 2.0e7,
            load: Loading::DEFAULT,
            edge: NetEdge::Fixed,
            csv_threshold: 2000,
        }
    }
}

/// The dome's default load: see README ("generate") for why.
pub const DOME_DEFAULT_LOAD: Loading = Loading::Plan(600.0);
/// The dome's default crown load, N.
pub const DOME_DEFAULT_CROWN_LOAD: f64 = 0.0;

/// Options of [`lattice_dome`].
#[derive(Clone, Debug, PartialEq)]
pub struct DomeOptions {
    /// Rings of nodes around the crown (at least 1); the outermost is supported.
    pub rings: usize,
    /// Nodes per ring (at least 3).
    pub sectors: usize,
    /// Plan radius of the outer ring, m.
    pub radius: f64,
    /// Height of the crown above the outer ring, m (less than `radius`).
    pub rise: f64,
    /// Axial rigidity of the bars, N.
    pub ea: f64,
    /// Downward reference load on the free nodes, by plan area or per node.
    pub load: Loading,
    /// Downward reference load at the crown, N, on top of `load`.
    pub crown_load: f64,
    /// Node and member tables go to CSV files when the dome has more nodes
    /// than this.
    pub csv_threshold: usize,
}

impl Default for DomeOptions {
    fn default() -> Self {
        DomeOptions {
            rings: 4,
            sectors: 12,
            radius: 10.0,
            rise: 1.0,
            ea: 1.0e8,
            load: DOME_DEFAULT_LOAD,
            crown_load: DOME_DEFAULT_CROWN_LOAD,
            csv_threshold: 2000,
        }
    }
}

/// A generated model: the TOML text and, for large models, the CSV files it
/// names (file name relative to the TOML file's folder, contents).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Generated {
    pub toml: String,
    pub csv: Vec<(String, String)>,
}

// ---------------------------------------------------------------------------
// Saddle net
// ---------------------------------------------------------------------------

/// A hyperbolic-paraboloid cable net on an `nx × ny` plan grid, prestressed
/// so that every interior node is in equilibrium before any load is applied.
///
/// With `NetEdge::Fixed` the boundary nodes are supported; with
/// `NetEdge::Elastic` they are free and held by springs, and they are loaded
/// like every other node. The edge cables are not balanced at a free edge
/// node, so with elastic edges the springs take that pull and the net draws
/// in a little before any load acts. `stem` names the CSV files (`{stem}_nodes.csv`,
/// `{stem}_members.csv`, `{stem}_loads.csv`) used when the net has more than `csv_threshold`
/// nodes; it must be a plain file-name stem (no path separators) even when no
/// CSV is written.
pub fn saddle_net(o: &NetOptions, stem: &str) -> Result<Generated, String> {
    check_stem(stem)?;
    let (nx, ny) = (o.nx, o.ny);
    if nx < 3 {
        return Err(format!("nx must be at least 3, got {nx}"));
    }
    if ny < 3 {
        return Err(format!("ny must be at least 3, got {ny}"));
    }
    let n_nodes = node_count(nx.checked_mul(ny), || format!("a {nx} x {ny} net"))?;
    positive("span_x", o.span_x)?;
    positive("span_y", o.span_y)?;
    finite("rise", o.rise)?;
    positive("force_density", o.force_density)?;
    positive("ea", o.ea)?;
    o.load.check()?;
    let spring = match o.edge {
        NetEdge::Fixed => None,
        NetEdge::Elastic { k } => {
            positive("edge spring stiffness k", k)?;
            Some(k)
        }
    };

    // Equilibrium of the prestress. Write u = x/(span_x/2), v = y/(span_y/2),
    // so z = rise·(u² − v²)/2, and let du = 2/(nx − 1), dv = 2/(ny − 1) be the
    // grid steps in u and v. A cable of force density q and chord d carries
    // the force q·d, so at an interior node the cable forces sum to
    //   q_x·(d_east + d_west) + q_y·(d_north + d_south).
    // Horizontally: the x-cables have chords ±hx (uniform plan spacing) and
    // no y part, the y-cables likewise, so the horizontal parts cancel.
    // Vertically: the x-cables give q_x times the second difference of z
    // along x, rise·du², and the y-cables q_y times the second difference
    // along y, −rise·dv² (a quadratic has constant second differences, equal
    // and opposite here). They cancel when q_x·du² = q_y·dv², i.e.
    // q_x/(nx − 1)² = q_y/(ny − 1)². For nx = ny that is one force density in
    // both directions; otherwise take q_x = q·(nx−1)/(ny−1) and
    // q_y = q·(ny−1)/(nx−1), whose geometric mean is the requested q.
    let ratio = (nx - 1) as f64 / (ny - 1) as f64;
    let (qx, qy) = if nx == ny {
        (o.force_density, o.force_density)
    } else {
        (o.force_density * ratio, o.force_density / ratio)
    };
    if !(qx.is_finite() && qy.is_finite() && qx > 0.0 && qy > 0.0) {
        return Err("force_density is out of range for this grid".into());
    }

    let wi = digits(nx - 1).max(3);
    let wj = digits(ny - 1).max(3);
    let n_members = (nx - 1) * ny + nx * (ny - 1);
    let mut d = Draft::new(n_nodes, 3 + wi + wj, n_members, 4 + wi + wj);
    d.title = format!("Saddle net {nx}x{ny} (generated)");
    d.kind = Kind::Cable;
    d.section = "strand";
    d.ea = o.ea;
    d.comments = vec![
        format!("Saddle net: a hyperbolic paraboloid cable net on a {nx} x {ny} plan grid,"),
        "prestressed so that every interior node is in equilibrium before loading.".into(),
        format!(
            "options: nx = {nx}, ny = {ny}, span_x = {} m, span_y = {} m, rise = {} m,",
            num(o.span_x),
            num(o.span_y),
            num(o.rise)
        ),
        format!(
            "  force_density = {} N/m, ea = {} N,",
            num(o.force_density),
            num(o.ea),
        ),
        format!("  {},", o.load.describe()),
        match spring {
            None => "  edge = fixed (boundary nodes supported in x, y and z)".into(),
            Some(k) => format!(
                "  edge = elastic (boundary nodes on x, y, z springs of k = {} N/m)",
                num(k)
            ),
        },
        format!(
            "force density along x = {} N/m, along y = {} N/m; prestress = force density x length",
            num(qx),
            num(qy)
        ),
    ];

    let a = o.span_x / 2.0;
    let b = o.span_y / 2.0;
    let us: Vec<f64> = (0..nx).map(|i| unit_coord(i, nx)).collect();
    let vs: Vec<f64> = (0..ny).map(|j| unit_coord(j, ny)).collect();
    for (j, &v) in vs.iter().enumerate() {
        for (i, &u) in us.iter().enumerate() {
            let z = o.rise * (u * u - v * v) / 2.0;
            let edge = i == 0 || j == 0 || i == nx - 1 || j == ny - 1;
            d.node(
                format_args!("N{i:0wi$}_{j:0wj$}"),
                [u * a, v * b, z],
                edge && spring.is_none(),
            );
        }
    }
    let at = |i: usize, j: usize| j * nx + i;
    for j in 0..ny {
        for i in 0..nx - 1 {
            let ends = [at(i, j), at(i + 1, j)];
            let p = qx * d.length(ends);
            d.member(format_args!("cx{i:0wi$}_{j:0wj$}"), ends, Some(p));
        }
    }
    for j in 0..ny - 1 {
        for i in 0..nx {
            let ends = [at(i, j), at(i, j + 1)];
            let p = qy * d.length(ends);
            d.member(format_args!("cy{i:0wi$}_{j:0wj$}"), ends, Some(p));
        }
    }
    if let Some(k) = spring {
        for j in 0..ny {
            for i in 0..nx {
                if i == 0 || j == 0 || i == nx - 1 || j == ny - 1 {
                    d.springs.push((at(i, j), k));
                }
            }
        }
    }
    // Plan cells: the grid rectangles, each (span_x/(nx−1)) × (span_y/(ny−1)).
    let cell = (o.span_x / (nx - 1) as f64) * (o.span_y / (ny - 1) as f64);
    let cells: Vec<[usize; 4]> = (0..ny - 1)
        .flat_map(|j| (0..nx - 1).map(move |i| [at(i, j), at(i + 1, j), at(i + 1, j + 1), at(i, j + 1)]))
        .collect();
    let areas = tributary_areas(n_nodes, cells.iter().map(|c| (&c[..], cell)));
    d.add_loads(&o.load.forces(&areas, &d.fixed));
    d.control = at((nx - 1) / 2, (ny - 1) / 2);
    d.tolerance = Some(1e-9);
    d.check("net")?;
    Ok(d.render(stem, o.csv_threshold))
}

/// Coordinate of grid line `i` of `n`, scaled to [−1, 1]; exactly symmetric.
fn unit_coord(i: usize, n: usize) -> f64 {
    let m = (n - 1) as f64;
    (2.0 * i as f64 - m) / m
}

// ---------------------------------------------------------------------------
// Lattice dome
// ---------------------------------------------------------------------------

/// A shallow triangulated dome on a spherical cap: a crown node and `rings`
/// rings of `sectors` nodes, the outer ring supported on the plane z = 0.
///
/// Bars join the crown to ring 1, each ring node to the same sector of the
/// next ring (radial) and to the next sector of the next ring (diagonal), and
/// neighbours within a ring (hoop). The bars are unstressed in the generated
/// geometry. `stem` is as in [`saddle_net`].
pub fn lattice_dome(o: &DomeOptions, stem: &str) -> Result<Generated, String> {
    check_stem(stem)?;
    let (rings, sectors) = (o.rings, o.sectors);
    if rings < 1 {
        return Err(format!("rings must be at least 1, got {rings}"));
    }
    if sectors < 3 {
        return Err(format!("sectors must be at least 3, got {sectors}"));
    }
    let n_nodes = node_count(
        rings.checked_mul(sectors).and_then(|n| n.checked_add(1)),
        || format!("a dome of {rings} rings x {sectors} sectors"),
    )?;
    positive("radius", o.radius)?;
    positive("rise", o.rise)?;
    if o.rise >= o.radius {
        return Err(format!(
            "rise must be less than radius for a shallow dome, got rise = {} and radius = {}",
            num(o.rise),
            num(o.radius)
        ));
    }
    positive("ea", o.ea)?;
    o.load.check()?;
    finite("crown_load", o.crown_load)?;

    // The sphere through the crown (0, 0, h) and the outer ring (r = a, z = 0)
    // has radius R = (a² + h²)/(2h). Its height above the ring plane at plan
    // radius r is sqrt(R² − r²) − (R − h), written here as
    // h − r²/(R + sqrt(R² − r²)) to avoid cancellation on very flat caps.
    let (a, h) = (o.radius, o.rise);
    let big_r = (a / h * a + h) / 2.0;
    if !big_r.is_finite() {
        return Err("the dome is too flat: rise is too small compared with radius".into());
    }
    let height = |r: f64| {
        let s = (big_r - r).max(0.0).sqrt() * (big_r + r).sqrt();
        (h - r * r / (big_r + s)).max(0.0)
    };

    let wr = digits(rings).max(2);
    let ws = digits(sectors - 1).max(2);
    let n_members = sectors * (3 * rings - 1);
    let mut d = Draft::new(n_nodes, 2 + wr + ws, n_members, 3 + wr + ws);
    d.title = format!("Lattice dome {rings} rings x {sectors} sectors (generated)");
    d.kind = Kind::Bar;
    d.section = "tube";
    d.ea = o.ea;
    d.comments = vec![
        format!(
            "Lattice dome: a triangulated shallow spherical cap, {rings} rings of {sectors} nodes"
        ),
        "around a crown node; the outer ring is supported in x, y and z.".into(),
        format!(
            "options: rings = {rings}, sectors = {sectors}, radius = {} m, rise = {} m,",
            num(o.radius),
            num(o.rise)
        ),
        format!(
            "  ea = {} N, crown_load = {} N; sphere radius = {} m",
            num(o.ea),
            num(o.crown_load),
            num(big_r)
        ),
        format!("  {}", o.load.describe()),
    ];

    d.node(format_args!("C"), [0.0, 0.0, h], false);
    let angles: Vec<(f64, f64)> = (0..sectors)
        .map(|j| (std::f64::consts::TAU * j as f64 / sectors as f64).sin_cos())
        .collect();
    for i in 1..=rings {
        let r = a * i as f64 / rings as f64;
        let z = if i == rings { 0.0 } else { height(r) };
        for (j, &(s, c)) in angles.iter().enumerate() {
            d.node(
                format_args!("R{i:0wr$}_{j:0ws$}"),
                [r * c, r * s, z],
                i == rings,
            );
        }
    }
    let at = |i: usize, j: usize| 1 + (i - 1) * sectors + j % sectors;
    for j in 0..sectors {
        d.member(format_args!("s{j:0ws$}"), [0, at(1, j)], None);
    }
    for i in 1..rings {
        for j in 0..sectors {
            d.member(
                format_args!("r{i:0wr$}_{j:0ws$}"),
                [at(i, j), at(i + 1, j)],
                None,
            );
        }
    }
    for i in 1..rings {
        for j in 0..sectors {
            d.member(
                format_args!("d{i:0wr$}_{j:0ws$}"),
                [at(i, j), at(i + 1, j + 1)],
                None,
            );
        }
    }
    for i in 1..=rings {
        for j in 0..sectors {
            d.member(
                format_args!("h{i:0wr$}_{j:0ws$}"),
                [at(i, j), at(i, j + 1)],
                None,
            );
        }
    }
    // Plan cells: the triangles the bars bound (crown fan, then two per
    // sector between rings), with their plan areas.
    let mut cells: Vec<[usize; 3]> = (0..sectors).map(|j| [0, at(1, j), at(1, j + 1)]).collect();
    for i in 1..rings {
        for j in 0..sectors {
            cells.push([at(i, j), at(i + 1, j), at(i + 1, j + 1)]);
            cells.push([at(i, j), at(i + 1, j + 1), at(i, j + 1)]);
        }
    }
    let plan_area = |[p, q, r]: [usize; 3]| {
        let (p, q, r) = (d.at[p], d.at[q], d.at[r]);
        0.5 * ((q[0] - p[0]) * (r[1] - p[1]) - (r[0] - p[0]) * (q[1] - p[1])).abs()
    };
    let areas = tributary_areas(n_nodes, cells.iter().map(|c| (&c[..], plan_area(*c))));
    let mut forces = o.load.forces(&areas, &d.fixed);
    forces[0] += o.crown_load;
    d.add_loads(&forces);
    d.control = 0;
    d.check("dome")?;
    Ok(d.render(stem, o.csv_threshold))
}

// ---------------------------------------------------------------------------
// Shared: option checks
// ---------------------------------------------------------------------------

fn positive(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(format!(
            "{name} must be a positive finite number, got {}",
            num(v)
        ))
    }
}

fn finite(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(format!("{name} must be a finite number, got {}", num(v)))
    }
}

fn node_count(n: Option<usize>, what: impl Fn() -> String) -> Result<usize, String> {
    match n {
        Some(n) if n <= MAX_GENERATED_NODES => Ok(n),
        _ => Err(format!(
            "{} would have more than {MAX_GENERATED_NODES} nodes; use fewer",
            what()
        )),
    }
}

fn check_stem(stem: &str) -> Result<(), String> {
    if stem.is_empty() {
        return Err("the file stem is empty".into());
    }
    if stem == "." || stem == ".." {
        return Err(format!("the file stem {stem:?} is not a file name"));
    }
    if stem.contains(['/', '\\']) {
        return Err(format!(
            "the file stem {stem:?} contains a path separator; give a bare name"
        ));
    }
    if stem.chars().any(char::is_control) {
        return Err(format!(
            "the file stem {stem:?} contains a control character"
        ));
    }
    Ok(())
}

fn digits(mut n: usize) -> usize {
    let mut d = 1;
    while n >= 10 {
        n /= 10;
        d += 1;
    }
    d
}

/// A number as it is written to files: shortest round-trip form, −0 as 0.
fn num(v: f64) -> Num {
    Num(v)
}

struct Num(f64);

impl fmt::Display for Num {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:?}", self.0 + 0.0)
    }
}

/// A TOML basic string.
struct TomlStr<'a>(&'a str);

impl fmt::Display for TomlStr<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_char('"')?;
        for c in self.0.chars() {
            match c {
                '"' => f.write_str("\\\"")?,
                '\\' => f.write_str("\\\\")?,
                c if c.is_control() => write!(f, "\\u{:04X}", c as u32)?,
                c => f.write_char(c)?,
            }
        }
        f.write_char('"')
    }
}

/// Shortest round-trip text of recently written numbers. Generated models
/// repeat many values (grid lines, mirror-image cables, equal loads), and
/// looking the text up is much cheaper than formatting the number again.
struct NumText {
    slots: Vec<(u64, String)>,
    shift: u32,
}

impl NumText {
    /// A cache of about `items` slots (a power of two between 64 and 65536).
    fn new(items: usize) -> NumText {
        let bits = items
            .clamp(64, 1 << 16)
            .next_power_of_two()
            .trailing_zeros();
        NumText {
            // Bits of a NaN never produced here, so empty slots never match.
            slots: vec![(u64::MAX, String::new()); 1 << bits],
            shift: 64 - bits,
        }
    }

    fn push(&mut self, out: &mut String, v: f64) {
        let v = v + 0.0;
        let key = v.to_bits();
        let h = (key.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> self.shift) as usize;
        let (bits, text) = &mut self.slots[h];
        if *bits != key {
            *bits = key;
            text.clear();
            let _ = write!(text, "{v:?}");
        }
        out.push_str(text);
    }
}

// ---------------------------------------------------------------------------
// Shared: the model being generated and its writer
// ---------------------------------------------------------------------------

/// Many short labels in one buffer.
struct Labels {
    text: String,
    ends: Vec<usize>,
}

impl Labels {
    fn with_capacity(n: usize, bytes_each: usize) -> Labels {
        Labels {
            text: String::with_capacity(n.saturating_mul(bytes_each)),
            ends: Vec::with_capacity(n),
        }
    }

    fn push(&mut self, label: fmt::Arguments) {
        // Writing to a String cannot fail.
        let _ = self.text.write_fmt(label);
        self.ends.push(self.text.len());
    }

    fn get(&self, i: usize) -> &str {
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.text[start..self.ends[i]]
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Kind {
    Bar,
    Cable,
}

impl Kind {
    fn name(self) -> &'static str {
        match self {
            Kind::Bar => "bar",
            Kind::Cable => "cable",
        }
    }
}

/// A generated model before it is written: one section and one member kind.
struct Draft {
    title: String,
    comments: Vec<String>,
    section: &'static str,
    ea: f64,
    kind: Kind,
    node_ids: Labels,
    at: Vec<[f64; 3]>,
    /// Supported in x, y and z.
    fixed: Vec<bool>,
    member_ids: Labels,
    ends: Vec<[usize; 2]>,
    prestress: Vec<Option<f64>>,
    /// Node and stiffness of springs in x, y and z.
    springs: Vec<(usize, f64)>,
    loads: Vec<(usize, [f64; 3])>,
    /// Controlled and watched node (in z).
    control: usize,
    tolerance: Option<f64>,
}

impl Draft {
    fn new(nodes: usize, node_id_len: usize, members: usize, member_id_len: usize) -> Draft {
        Draft {
            title: String::new(),
            comments: Vec::new(),
            section: "",
            ea: 0.0,
            kind: Kind::Bar,
            node_ids: Labels::with_capacity(nodes, node_id_len),
            at: Vec::with_capacity(nodes),
            fixed: Vec::with_capacity(nodes),
            member_ids: Labels::with_capacity(members, member_id_len),
            ends: Vec::with_capacity(members),
            prestress: Vec::with_capacity(members),
            springs: Vec::new(),
            loads: Vec::new(),
            control: 0,
            tolerance: None,
        }
    }

    fn node(&mut self, id: fmt::Arguments, at: [f64; 3], fixed: bool) {
        self.node_ids.push(id);
        self.at.push(at.map(|v| v + 0.0));
        self.fixed.push(fixed);
    }

    fn member(&mut self, id: fmt::Arguments, ends: [usize; 2], prestress: Option<f64>) {
        self.member_ids.push(id);
        self.ends.push(ends);
        self.prestress.push(prestress);
    }

    /// Downward loads, one per node with a nonzero force.
    fn add_loads(&mut self, down: &[f64]) {
        for (k, &f) in down.iter().enumerate() {
            if f != 0.0 {
                self.loads.push((k, [0.0, 0.0, -f]));
            }
        }
    }

    fn length(&self, [i, j]: [usize; 2]) -> f64 {
        let (p, q) = (self.at[i], self.at[j]);
        (q[0] - p[0]).hypot(q[1] - p[1]).hypot(q[2] - p[2])
    }

    /// Everything written is finite and no member is degenerate.
    fn check(&self, what: &str) -> Result<(), String> {
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for p in &self.at {
            if !p.iter().all(|v| v.is_finite()) {
                return Err(format!(
                    "the {what} has coordinates too large to represent; reduce its dimensions"
                ));
            }
            for k in 0..3 {
                lo[k] = lo[k].min(p[k]);
                hi[k] = hi[k].max(p[k]);
            }
        }
        let size = (hi[0] - lo[0]).hypot(hi[1] - lo[1]).hypot(hi[2] - lo[2]);
        for (m, &ends) in self.ends.iter().enumerate() {
            let len = self.length(ends);
            if !len.is_finite() || len <= 1e-10 * size {
                return Err(format!(
                    "the {what}'s dimensions are out of range: member {} would be {} m long",
                    self.member_ids.get(m),
                    num(len)
                ));
            }
            if let Some(p) = self.prestress[m]
                && !p.is_finite()
            {
                return Err(format!(
                    "the {what}'s prestress is too large to represent; reduce the force density or the spans"
                ));
            }
        }
        Ok(())
    }

    fn render(&self, stem: &str, csv_threshold: usize) -> Generated {
        let n = self.at.len();
        let m = self.ends.len();
        let use_csv = n > csv_threshold;
        let node_len = self.node_ids.text.len().checked_div(n).unwrap_or(0);
        let member_len = self.member_ids.text.len().checked_div(m).unwrap_or(0);
        // Rough sizes of one entry; a number takes at most 24 bytes.
        let node_bytes = node_len + 3 * 24 + 8;
        let member_bytes = member_len + 2 * node_len + self.section.len() + 40;
        let tables = if use_csv {
            0
        } else {
            n * (node_bytes + 40) + m * (member_bytes + 70)
        };
        let load_bytes = node_len + 3 * 24 + 8;
        let loads = if use_csv { 0 } else { self.loads.len() * (load_bytes + 32) };
        let cap = 1024 + tables + loads + self.springs.len() * 3 * (node_len + 50);
        let mut nums = NumText::new(n);
        let mut t = String::with_capacity(cap);
        // Writing to a String cannot fail; those results are ignored below.
        for c in &self.comments {
            let _ = writeln!(t, "# {c}");
        }
        let _ = writeln!(t, "title = {}", TomlStr(&self.title));
        let mut csv = Vec::new();
        if use_csv {
            let nodes_name = format!("{stem}_nodes.csv");
            let members_name = format!("{stem}_members.csv");
            let loads_name = format!("{stem}_loads.csv");
            let _ = writeln!(t, "nodes_csv = {}", TomlStr(&nodes_name));
            let _ = writeln!(t, "members_csv = {}", TomlStr(&members_name));
            let _ = writeln!(t, "loads_csv = {}", TomlStr(&loads_name));
            let nodes = self.nodes_csv(n * node_bytes + 64, &mut nums);
            csv.push((nodes_name, nodes));
            let members = self.members_csv(m * member_bytes + 64, &mut nums);
            csv.push((members_name, members));
            let loads = self.loads_csv(self.loads.len() * load_bytes + 64, &mut nums);
            csv.push((loads_name, loads));
        }
        let _ = write!(
            t,
            "\n[[section]]\nname = {}\nEA = {}\n",
            TomlStr(self.section),
            num(self.ea)
        );
        // Generated ids are ASCII letters, digits and underscores: they need
        // no quoting or escaping in TOML or CSV.
        if !use_csv {
            for k in 0..n {
                t.push_str("\n[[node]]\nid = \"");
                t.push_str(self.node_ids.get(k));
                t.push_str("\"\nat = ");
                push_triple(&mut t, &mut nums, self.at[k]);
                t.push('\n');
                if self.fixed[k] {
                    t.push_str("fix = \"xyz\"\n");
                }
            }
            for k in 0..m {
                let [a, b] = self.ends[k];
                t.push_str("\n[[member]]\nid = \"");
                t.push_str(self.member_ids.get(k));
                t.push_str("\"\nkind = \"");
                t.push_str(self.kind.name());
                t.push_str("\"\nends = [\"");
                t.push_str(self.node_ids.get(a));
                t.push_str("\", \"");
                t.push_str(self.node_ids.get(b));
                t.push_str("\"]\nsection = \"");
                t.push_str(self.section);
                t.push_str("\"\n");
                if let Some(p) = self.prestress[k] {
                    t.push_str("prestress = ");
                    nums.push(&mut t, p);
                    t.push('\n');
                }
            }
        }
        for &(node, k) in &self.springs {
            for dir in ["x", "y", "z"] {
                t.push_str("\n[[spring]]\nnode = \"");
                t.push_str(self.node_ids.get(node));
                t.push_str("\"\ndir = \"");
                t.push_str(dir);
                t.push_str("\"\nk = ");
                nums.push(&mut t, k);
                t.push('\n');
            }
        }
        if !use_csv {
            for &(node, f) in &self.loads {
                t.push_str("\n[[load]]\nnode = \"");
                t.push_str(self.node_ids.get(node));
                t.push_str("\"\nforce = ");
                push_triple(&mut t, &mut nums, f);
                t.push('\n');
            }
        }
        let control = self.node_ids.get(self.control);
        let _ = write!(
            t,
            "\n[analysis]\nstrain = \"green\"\nmethod = \"newton\"\ncontrol = \"load\"\n\
             steps = 10\ntarget = 1.0\nnode = \"{control}\"\ndir = \"z\"\n"
        );
        if let Some(tol) = self.tolerance {
            let _ = writeln!(t, "tolerance = {}", num(tol));
        }
        let _ = writeln!(t, "watch = [\"{control}.z\"]");
        Generated { toml: t, csv }
    }

    fn nodes_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("id,x,y,z,fix\n");
        for k in 0..self.at.len() {
            let p = self.at[k];
            s.push_str(self.node_ids.get(k));
            for v in p {
                s.push(',');
                nums.push(&mut s, v);
            }
            s.push_str(if self.fixed[k] { ",xyz\n" } else { ",\n" });
        }
        s
    }

    fn loads_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("node,fx,fy,fz\n");
        for &(node, f) in &self.loads {
            s.push_str(self.node_ids.get(node));
            for v in f {
                s.push(',');
                nums.push(&mut s, v);
            }
            s.push('\n');
        }
        s
    }

    fn members_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("id,kind,end1,end2,section,prestress\n");
        for k in 0..self.ends.len() {
            let [a, b] = self.ends[k];
            for (i, cell) in [
                self.member_ids.get(k),
                self.kind.name(),
                self.node_ids.get(a),
                self.node_ids.get(b),
                self.section,
            ]
            .into_iter()
            .enumerate()
            {
                if i > 0 {
                    s.push(',');
                }
                s.push_str(cell);
            }
            s.push(',');
            if let Some(p) = self.prestress[k] {
                nums.push(&mut s, p);
            }
            s.push('\n');
        }
        s
    }
}

/// `[a, b, c]`
fn push_triple(out: &mut String, nums: &mut NumText, v: [f64; 3]) {
    out.push('[');
    nums.push(out, v[0]);
    out.push_str(", ");
    nums.push(out, v[1]);
    out.push_str(", ");
    nums.push(out, v[2]);
    out.push(']');
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::HashMap;
    use std::path::PathBuf;
    use std::sync::atomic::{AtomicUsize, Ordering};

    fn parse(text: &str) -> toml::Table {
        match toml::from_str::<toml::Table>(text) {
            Ok(t) => t,
            Err(e) => panic!("generated TOML does not parse: {e}\n{text}"),
        }
    }

    fn tables<'a>(t: &'a toml::Table, key: &str) -> Vec<&'a toml::Table> {
        t.get(key)
            .and_then(|v| v.as_array())
            .map(|a| a.iter().map(|v| v.as_table().unwrap()).collect())
            .unwrap_or_default()
    }

    fn float(v: &toml::Value) -> f64 {
        v.as_float()
            .or_else(|| v.as_integer().map(|i| i as f64))
            .unwrap()
    }

    /// A net with the per-node load of 500 N (the old default), so counts
    /// and values of loads can be checked exactly.
    fn small_net(nx: usize, ny: usize) -> NetOptions {
        NetOptions {
            nx,
            ny,
            load: Loading::PerNode(500.0),
            ..NetOptions::default()
        }
    }

    /// A dome with only a crown load of 1000 N (the old default).
    fn small_dome(rings: usize, sectors: usize) -> DomeOptions {
        DomeOptions {
            rings,
            sectors,
            load: Loading::PerNode(0.0),
            crown_load: 1000.0,
            ..DomeOptions::default()
        }
    }

    fn net_err(o: NetOptions) -> String {
        saddle_net(&o, "net").unwrap_err()
    }

    fn dome_err(o: DomeOptions) -> String {
        lattice_dome(&o, "dome").unwrap_err()
    }

    /// Nodes (id → position, fixed), members (ends, prestress) and loads
    /// (node, force) of a model, read from its TOML or its CSV files.
    struct Read {
        nodes: HashMap<String, ([f64; 3], bool)>,
        members: Vec<(String, [String; 2], Option<f64>)>,
        loads: Vec<(String, [f64; 3])>,
    }

    fn read(g: &Generated) -> Read {
        let t = parse(&g.toml);
        let mut nodes = HashMap::new();
        let mut members = Vec::new();
        let mut loads = Vec::new();
        for l in tables(&t, "load") {
            let f = l["force"].as_array().unwrap();
            loads.push((l["node"].as_str().unwrap().to_string(), [float(&f[0]), float(&f[1]), float(&f[2])]));
        }
        for n in tables(&t, "node") {
            let at = n["at"].as_array().unwrap();
            let p = [float(&at[0]), float(&at[1]), float(&at[2])];
            let fixed = n.get("fix").map(|f| f.as_str().unwrap() == "xyz");
            nodes.insert(
                n["id"].as_str().unwrap().to_string(),
                (p, fixed.unwrap_or(false)),
            );
        }
        for m in tables(&t, "member") {
            let ends = m["ends"].as_array().unwrap();
            members.push((
                m["id"].as_str().unwrap().to_string(),
                [
                    ends[0].as_str().unwrap().to_string(),
                    ends[1].as_str().unwrap().to_string(),
                ],
                m.get("prestress").map(float),
            ));
        }
        for (name, text) in &g.csv {
            let mut lines = text.lines();
            let header = lines.next().unwrap();
            for line in lines {
                let c: Vec<&str> = line.split(',').collect();
                if name.ends_with("_nodes.csv") {
                    assert_eq!(header, "id,x,y,z,fix");
                    assert_eq!(c.len(), 5, "{line}");
                    let p = [1, 2, 3].map(|k| c[k].parse::<f64>().unwrap());
                    nodes.insert(c[0].to_string(), (p, c[4] == "xyz"));
                } else if name.ends_with("_loads.csv") {
                    assert_eq!(header, "node,fx,fy,fz");
                    assert_eq!(c.len(), 4, "{line}");
                    loads.push((c[0].to_string(), [1, 2, 3].map(|k| c[k].parse::<f64>().unwrap())));
                } else {
                    assert_eq!(header, "id,kind,end1,end2,section,prestress");
                    assert_eq!(c.len(), 6, "{line}");
                    let p = (!c[5].is_empty()).then(|| c[5].parse::<f64>().unwrap());
                    members.push((c[0].to_string(), [c[2].to_string(), c[3].to_string()], p));
                }
            }
        }
        Read { nodes, members, loads }
    }

    /// Largest |Σ prestress·unit chord| over the free nodes, and the largest prestress.
    fn worst_residual(r: &Read) -> (f64, f64) {
        let mut sum: HashMap<&str, [f64; 3]> = HashMap::new();
        let mut biggest: f64 = 0.0;
        for (_, [a, b], p) in &r.members {
            let p = p.expect("every cable has a prestress");
            biggest = biggest.max(p);
            let (pa, pb) = (r.nodes[a].0, r.nodes[b].0);
            let d = [pb[0] - pa[0], pb[1] - pa[1], pb[2] - pa[2]];
            let len = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            let f = d.map(|dk| p * dk / len);
            let sa = sum.entry(a.as_str()).or_default();
            (0..3).for_each(|k| sa[k] += f[k]);
            let sb = sum.entry(b.as_str()).or_default();
            (0..3).for_each(|k| sb[k] -= f[k]);
        }
        let worst = r
            .nodes
            .iter()
            .filter(|(_, (_, fixed))| !fixed)
            .map(|(id, _)| {
                let f = sum[id.as_str()];
                (f[0] * f[0] + f[1] * f[1] + f[2] * f[2]).sqrt()
            })
            .fold(0.0, f64::max);
        (worst, biggest)
    }

    fn temp_dir() -> PathBuf {
        static N: AtomicUsize = AtomicUsize::new(0);
        let dir = std::env::temp_dir().join(format!(
            "tautline-generate-{}-{}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    // -- option checks ------------------------------------------------------

    #[test]
    fn net_options_are_checked() {
        assert!(net_err(small_net(2, 5)).contains("nx must be at least 3"));
        assert!(net_err(small_net(5, 0)).contains("ny must be at least 3"));
        let e = net_err(NetOptions {
            span_x: -1.0,
            ..NetOptions::default()
        });
        assert!(e.contains("span_x must be a positive"), "{e}");
        assert!(
            net_err(NetOptions {
                span_y: 0.0,
                ..NetOptions::default()
            })
            .contains("span_y")
        );
        assert!(
            net_err(NetOptions {
                rise: f64::NAN,
                ..NetOptions::default()
            })
            .contains("rise must be a finite number")
        );
        assert!(
            net_err(NetOptions {
                force_density: 0.0,
                ..NetOptions::default()
            })
            .contains("force_density")
        );
        assert!(
            net_err(NetOptions {
                ea: f64::INFINITY,
                ..NetOptions::default()
            })
            .contains("ea")
        );
        assert!(
            net_err(NetOptions {
                load: Loading::Plan(f64::NEG_INFINITY),
                ..NetOptions::default()
            })
            .contains("load")
        );
        assert!(
            net_err(NetOptions {
                load: Loading::PerNode(f64::NAN),
                ..NetOptions::default()
            })
            .contains("node load")
        );
        assert!(
            net_err(NetOptions {
                edge: NetEdge::Elastic { k: -5.0 },
                ..NetOptions::default()
            })
            .contains("spring stiffness")
        );
        assert!(net_err(small_net(2001, 2001)).contains("more than 4000000 nodes"));
        assert!(net_err(small_net(usize::MAX, 3)).contains("more than"));
        // Values that pass the checks one by one but overflow together.
        assert!(
            net_err(NetOptions {
                span_x: 1e308,
                span_y: 1e308,
                ..NetOptions::default()
            })
            .contains("prestress")
        );
        assert!(
            net_err(NetOptions {
                force_density: 1e308,
                ..NetOptions::default()
            })
            .contains("prestress")
        );
        // Messages start in lower case.
        for e in [net_err(small_net(2, 5)), net_err(small_net(2001, 2001))] {
            assert!(e.starts_with(|c: char| !c.is_uppercase()), "{e}");
        }
    }

    #[test]
    fn dome_options_are_checked() {
        assert!(dome_err(small_dome(0, 6)).contains("rings must be at least 1"));
        assert!(dome_err(small_dome(3, 2)).contains("sectors must be at least 3"));
        assert!(
            dome_err(DomeOptions {
                radius: -2.0,
                ..DomeOptions::default()
            })
            .contains("radius")
        );
        assert!(
            dome_err(DomeOptions {
                rise: 0.0,
                ..DomeOptions::default()
            })
            .contains("rise")
        );
        assert!(
            dome_err(DomeOptions {
                rise: 10.0,
                radius: 10.0,
                ..DomeOptions::default()
            })
            .contains("rise must be less than radius")
        );
        assert!(
            dome_err(DomeOptions {
                ea: -1.0,
                ..DomeOptions::default()
            })
            .contains("ea")
        );
        assert!(
            dome_err(DomeOptions {
                crown_load: f64::NAN,
                ..DomeOptions::default()
            })
            .contains("crown_load")
        );
        assert!(
            dome_err(DomeOptions {
                load: Loading::Plan(f64::INFINITY),
                ..DomeOptions::default()
            })
            .contains("load")
        );
        assert!(dome_err(small_dome(2000, 2001)).contains("more than 4000000 nodes"));
        assert!(dome_err(small_dome(usize::MAX, usize::MAX)).contains("more than"));
        assert!(
            dome_err(DomeOptions {
                rise: 5e-324,
                ..DomeOptions::default()
            })
            .contains("too flat")
        );
    }

    #[test]
    fn stems_must_be_bare_file_names() {
        let o = NetOptions::default();
        for bad in ["", ".", "..", "a/b", "a\\b", "a\nb"] {
            assert!(saddle_net(&o, bad).is_err(), "{bad:?}");
            assert!(
                lattice_dome(&DomeOptions::default(), bad).is_err(),
                "{bad:?}"
            );
        }
        // A stem with a quote is escaped in the TOML.
        let g = saddle_net(
            &NetOptions {
                csv_threshold: 0,
                ..small_net(3, 3)
            },
            "my \"net\"",
        )
        .unwrap();
        let t = parse(&g.toml);
        assert_eq!(t["nodes_csv"].as_str(), Some("my \"net\"_nodes.csv"));
        assert_eq!(g.csv[0].0, "my \"net\"_nodes.csv");
    }

    #[test]
    fn defaults_generate() {
        let net = NetOptions::default();
        assert_eq!((net.span_x, net.span_y, net.rise), (20.0, 20.0, 2.0));
        assert_eq!(
            (net.force_density, net.ea, net.load),
            (2000.0, 2.0e7, Loading::Plan(600.0))
        );
        assert_eq!((net.edge, net.csv_threshold), (NetEdge::Fixed, 2000));
        let dome = DomeOptions::default();
        assert_eq!(
            (dome.radius, dome.rise, dome.ea, dome.load, dome.crown_load),
            (10.0, 1.0, 1e8, Loading::Plan(600.0), 0.0)
        );
        assert!(saddle_net(&net, "net").is_ok());
        assert!(lattice_dome(&dome, "dome").is_ok());
    }

    // -- saddle net ---------------------------------------------------------

    #[test]
    fn net_counts_ids_and_keys() {
        for (nx, ny) in [(3, 3), (4, 7), (6, 5)] {
            let g = saddle_net(&small_net(nx, ny), "net").unwrap();
            assert!(g.csv.is_empty());
            let t = parse(&g.toml);
            let nodes = tables(&t, "node");
            let members = tables(&t, "member");
            assert_eq!(nodes.len(), nx * ny);
            assert_eq!(members.len(), (nx - 1) * ny + nx * (ny - 1));
            let fixed = nodes.iter().filter(|n| n.get("fix").is_some()).count();
            assert_eq!(fixed, 2 * (nx + ny) - 4);
            assert_eq!(tables(&t, "load").len(), (nx - 2) * (ny - 2));
            assert!(tables(&t, "spring").is_empty());
            let cx = members
                .iter()
                .filter(|m| m["id"].as_str().unwrap().starts_with("cx"))
                .count();
            assert_eq!(cx, (nx - 1) * ny);
            assert!(members.iter().all(|m| m["kind"].as_str() == Some("cable")));
            assert!(
                members
                    .iter()
                    .all(|m| m["section"].as_str() == Some("strand"))
            );
            for l in tables(&t, "load") {
                let f = l["force"].as_array().unwrap();
                assert_eq!(f.iter().map(float).collect::<Vec<_>>(), [0.0, 0.0, -500.0]);
            }
            assert_eq!(
                t["title"].as_str().unwrap(),
                format!("Saddle net {nx}x{ny} (generated)")
            );
            let s = tables(&t, "section");
            assert_eq!(s.len(), 1);
            assert_eq!(float(&s[0]["EA"]), 2.0e7);
            assert!(g.toml.starts_with("# "));
        }
        let g = saddle_net(&small_net(7, 5), "net").unwrap();
        let t = parse(&g.toml);
        assert_eq!(tables(&t, "node")[0]["id"].as_str(), Some("N000_000"));
        let a = t["analysis"].as_table().unwrap();
        assert_eq!(a["strain"].as_str(), Some("green"));
        assert_eq!(a["method"].as_str(), Some("newton"));
        assert_eq!(a["control"].as_str(), Some("load"));
        assert_eq!(a["steps"].as_integer(), Some(10));
        assert_eq!(float(&a["target"]), 1.0);
        assert_eq!(a["node"].as_str(), Some("N003_002"));
        assert_eq!(a["dir"].as_str(), Some("z"));
        assert_eq!(float(&a["tolerance"]), 1e-9);
        let watch: Vec<_> = a["watch"]
            .as_array()
            .unwrap()
            .iter()
            .map(|w| w.as_str().unwrap())
            .collect();
        assert_eq!(watch, ["N003_002.z"]);
        // The centre node sits at the middle of the plan, on the saddle point.
        let centre = tables(&t, "node")
            .into_iter()
            .find(|n| n["id"].as_str() == Some("N003_002"))
            .unwrap();
        let at: Vec<f64> = centre["at"].as_array().unwrap().iter().map(float).collect();
        assert_eq!(at, [0.0, 0.0, 0.0]);
    }

    #[test]
    fn net_geometry_is_a_hypar_over_the_plan() {
        let o = NetOptions {
            span_x: 30.0,
            span_y: 12.0,
            rise: 3.0,
            ..small_net(7, 5)
        };
        let r = read(&saddle_net(&o, "net").unwrap());
        for (p, _) in r.nodes.values() {
            assert!(p[0].abs() <= 15.0 && p[1].abs() <= 6.0);
            let z = 3.0 * ((p[0] / 15.0).powi(2) - (p[1] / 6.0).powi(2)) / 2.0;
            assert!((p[2] - z).abs() < 1e-12, "{p:?}");
        }
        assert_eq!(r.nodes["N000_000"].0, [-15.0, -6.0, 0.0]);
        assert_eq!(r.nodes["N006_002"].0, [15.0, 0.0, 1.5]);
        assert_eq!(r.nodes["N003_004"].0, [0.0, 6.0, -1.5]);
    }

    #[test]
    fn net_elastic_edge_uses_springs_instead_of_supports() {
        let (nx, ny) = (5, 4);
        let o = NetOptions {
            edge: NetEdge::Elastic { k: 1.5e4 },
            ..small_net(nx, ny)
        };
        let t = parse(&saddle_net(&o, "net").unwrap().toml);
        assert!(tables(&t, "node").iter().all(|n| n.get("fix").is_none()));
        let springs = tables(&t, "spring");
        assert_eq!(springs.len(), 3 * (2 * (nx + ny) - 4));
        assert!(springs.iter().all(|s| float(&s["k"]) == 1.5e4));
        for dir in ["x", "y", "z"] {
            let n = springs
                .iter()
                .filter(|s| s["dir"].as_str() == Some(dir))
                .count();
            assert_eq!(n, 2 * (nx + ny) - 4);
        }
        assert!(
            springs
                .iter()
                .any(|s| s["node"].as_str() == Some("N000_000"))
        );
        assert!(
            !springs
                .iter()
                .any(|s| s["node"].as_str() == Some("N001_001"))
        );
        // Every node is free, so every node is loaded.
        assert_eq!(tables(&t, "load").len(), nx * ny);
    }

    #[test]
    fn net_zero_load_writes_no_loads() {
        for load in [Loading::Plan(0.0), Loading::PerNode(0.0)] {
            let o = NetOptions { load, ..small_net(4, 4) };
            let t = parse(&saddle_net(&o, "net").unwrap().toml);
            assert!(tables(&t, "load").is_empty());
        }
    }

    #[test]
    fn net_prestress_is_in_equilibrium_at_every_interior_node() {
        let cases = [
            NetOptions::default(),
            small_net(3, 3),
            NetOptions {
                span_x: 30.0,
                span_y: 12.0,
                rise: -4.5,
                force_density: 750.0,
                ..small_net(9, 5)
            },
            NetOptions {
                span_x: 7.0,
                span_y: 41.0,
                rise: 6.0,
                ..small_net(4, 13)
            },
            NetOptions {
                rise: 0.0,
                ..small_net(6, 8)
            },
        ];
        for o in cases {
            let g = saddle_net(&o, "net").unwrap();
            let (worst, biggest) = worst_residual(&read(&g));
            assert!(biggest > 0.0);
            assert!(
                worst < 1e-9 * biggest,
                "{}x{}: {worst} vs {biggest}",
                o.nx,
                o.ny
            );
        }
    }

    #[test]
    fn square_grids_use_one_force_density_and_others_keep_its_mean() {
        let r = read(&saddle_net(&small_net(6, 6), "net").unwrap());
        let q = |r: &Read, prefix: &str| -> Vec<f64> {
            r.members
                .iter()
                .filter(|m| m.0.starts_with(prefix))
                .map(|(_, [a, b], p)| {
                    let (pa, pb) = (r.nodes[a].0, r.nodes[b].0);
                    let d = [0, 1, 2].map(|k| pb[k] - pa[k]);
                    p.unwrap() / (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt()
                })
                .collect()
        };
        for v in q(&r, "c") {
            assert!((v / 2000.0 - 1.0).abs() < 1e-12, "{v}");
        }
        let r = read(&saddle_net(&small_net(9, 5), "net").unwrap());
        let (qx, qy) = (q(&r, "cx"), q(&r, "cy"));
        assert!(qx.iter().all(|v| (v / 4000.0 - 1.0).abs() < 1e-12));
        assert!(qy.iter().all(|v| (v / 1000.0 - 1.0).abs() < 1e-12));
    }

    #[test]
    fn large_net_goes_to_csv() {
        let (nx, ny) = (12, 9);
        let o = NetOptions {
            csv_threshold: 100,
            ..small_net(nx, ny)
        };
        let g = saddle_net(&o, "big").unwrap();
        assert_eq!(g.csv.len(), 3);
        assert_eq!(g.csv[0].0, "big_nodes.csv");
        assert_eq!(g.csv[1].0, "big_members.csv");
        assert_eq!(g.csv[2].0, "big_loads.csv");
        assert_eq!(g.csv[2].1.lines().count(), 1 + (nx - 2) * (ny - 2));
        assert_eq!(g.csv[0].1.lines().count(), 1 + nx * ny);
        assert_eq!(
            g.csv[1].1.lines().count(),
            1 + (nx - 1) * ny + nx * (ny - 1)
        );
        let t = parse(&g.toml);
        assert_eq!(t["nodes_csv"].as_str(), Some("big_nodes.csv"));
        assert_eq!(t["members_csv"].as_str(), Some("big_members.csv"));
        assert_eq!(t["loads_csv"].as_str(), Some("big_loads.csv"));
        assert!(tables(&t, "node").is_empty() && tables(&t, "member").is_empty());
        assert!(tables(&t, "load").is_empty());
        assert_eq!(tables(&t, "section").len(), 1);
        assert!(t.contains_key("analysis"));
        // The file keys come before the first table.
        let first_table = g.toml.find("\n[").unwrap();
        assert!(g.toml.find("nodes_csv").unwrap() < first_table);
        assert!(g.toml.find("members_csv").unwrap() < first_table);
        assert!(g.toml.find("loads_csv").unwrap() < first_table);
        // Same model either way.
        let small = read(&saddle_net(&small_net(nx, ny), "big").unwrap());
        let big = read(&g);
        assert_eq!(small.nodes, big.nodes);
        assert_eq!(small.members, big.members);
        assert_eq!(small.loads, big.loads);
        let (worst, biggest) = worst_residual(&big);
        assert!(worst < 1e-9 * biggest);
        // At the threshold it stays in the TOML.
        let o = NetOptions {
            csv_threshold: nx * ny,
            ..o
        };
        assert!(saddle_net(&o, "big").unwrap().csv.is_empty());
    }

    // -- plan-area loads ------------------------------------------------------

    /// Sum of the downward loads written, N.
    fn total_down(r: &Read) -> f64 {
        r.loads.iter().map(|(_, f)| -f[2]).sum()
    }

    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    /// Plan load on a net with fixed edges. Derived: the plan grid has
    /// (nx − 1)(ny − 1) rectangles of hx·hy, hx = span_x/(nx − 1); each gives
    /// a quarter of its area to each corner, so an interior node carries
    /// hx·hy and the (nx − 2)(ny − 2) free nodes together carry
    /// (nx − 2)·hx·(ny − 2)·hy = (span_x − hx)(span_y − hy): the plan less the
    /// strip of half a cell along the supported edge, whose load goes
    /// straight to the supports.
    #[test]
    fn net_plan_load_totals_the_pressure_on_the_area_the_free_nodes_carry() {
        for (nx, ny, sx, sy, p) in [(3, 3, 20.0, 20.0, 600.0), (4, 7, 12.0, 30.0, 250.0), (31, 17, 20.0, 20.0, 600.0)] {
            let o = NetOptions { nx, ny, span_x: sx, span_y: sy, load: Loading::Plan(p), ..NetOptions::default() };
            let r = read(&saddle_net(&o, "net").unwrap());
            assert_eq!(r.loads.len(), (nx - 2) * (ny - 2));
            let (hx, hy) = (sx / (nx - 1) as f64, sy / (ny - 1) as f64);
            assert!(rel(total_down(&r), p * (sx - hx) * (sy - hy)) < 1e-12, "{nx}x{ny}");
            for (_, f) in &r.loads {
                assert_eq!([f[0], f[1]], [0.0, 0.0]);
                assert!(rel(-f[2], p * hx * hy) < 1e-12);
            }
        }
    }

    /// With elastic edges every node is free, so the free nodes carry the
    /// whole plan: total = P·span_x·span_y (derived as above); an edge node
    /// has two cells (half an interior share), a corner one (a quarter).
    #[test]
    fn elastic_edge_net_carries_the_whole_plan() {
        let (nx, ny, p) = (6, 5, 400.0);
        let o = NetOptions { nx, ny, load: Loading::Plan(p), edge: NetEdge::Elastic { k: 1e4 }, ..NetOptions::default() };
        let r = read(&saddle_net(&o, "net").unwrap());
        assert_eq!(r.loads.len(), nx * ny);
        assert!(rel(total_down(&r), p * 20.0 * 20.0) < 1e-12);
        let cell = p * 20.0 / 5.0 * 20.0 / 4.0;
        let at = |id: &str| -r.loads.iter().find(|(n, _)| n == id).unwrap().1[2];
        assert!(rel(at("N000_000"), cell / 4.0) < 1e-12);
        assert!(rel(at("N002_000"), cell / 2.0) < 1e-12);
        assert!(rel(at("N002_002"), cell) < 1e-12);
    }

    /// Refining the net keeps the load per square metre: the default
    /// 600 N/m² on the default 20 m × 20 m plan gives each free node of a
    /// 578 × 578 net 600·(20/577)² ≈ 0.72 N, and the total stays within the
    /// edge strip of 600·400 N at every size.
    #[test]
    fn default_loads_are_physical_at_every_size() {
        for n in [5, 11, 60, 183, 578] {
            let o = NetOptions { nx: n, ny: n, ..NetOptions::default() };
            let d = read(&saddle_net(&o, "net").unwrap());
            let h = 20.0 / (n - 1) as f64;
            let each = 600.0 * h * h;
            assert!(d.loads.iter().all(|(_, f)| rel(-f[2], each) < 1e-12), "{n}");
            let total = total_down(&d);
            assert!(rel(total, 600.0 * (20.0 - h) * (20.0 - h)) < 1e-9, "{n}");
            assert!(total <= 600.0 * 400.0 && total > 0.5 * 600.0 * 400.0, "{n}: {total}");
            if n == 578 {
                assert!((each - 0.7209).abs() < 1e-4, "{each}");
            }
        }
    }

    /// `PerNode` is the old behaviour: the same force on every free node,
    /// whatever the spacing.
    #[test]
    fn per_node_load_is_unchanged() {
        for n in [4, 9] {
            let o = NetOptions { nx: n, ny: n, load: Loading::PerNode(500.0), ..NetOptions::default() };
            let r = read(&saddle_net(&o, "net").unwrap());
            assert_eq!(r.loads.len(), (n - 2) * (n - 2));
            assert!(r.loads.iter().all(|(_, f)| *f == [0.0, 0.0, -500.0]));
        }
        let o = DomeOptions { load: Loading::PerNode(50.0), crown_load: 0.0, ..small_dome(3, 7) };
        let r = read(&lattice_dome(&o, "dome").unwrap());
        assert_eq!(r.loads.len(), 1 + 2 * 7);
        assert!(r.loads.iter().all(|(_, f)| *f == [0.0, 0.0, -50.0]));
    }

    /// Plan load on the dome. Derived: with θ = 2π/S the cells are the crown
    /// fan and, between rings of plan radius r1 < r2, per sector the
    /// triangles T1 = (r1·e_j, r2·e_j, r2·e_j+1) of area r2(r2 − r1)sinθ/2 and
    /// T2 = (r1·e_j, r2·e_j+1, r1·e_j+1) of area r1(r2 − r1)sinθ/2 (base along
    /// a ray, height r·sinθ). They tile the outer polygon, of area
    /// S·a²·sinθ/2. The supported outer ring takes a third of each corner it
    /// holds in the last band: per sector (2·T1 + T2)/3 =
    /// (a − r1)(a + r1/2)·sinθ/3 with r1 = a(R − 1)/R (for R = 1 the fan,
    /// r1 = 0). So the free nodes carry P·S·sinθ·(a²/2 − (a − r1)(a + r1/2)/3).
    #[test]
    fn dome_plan_load_totals_the_pressure_on_the_area_the_free_nodes_carry() {
        for (rings, sectors, a, p) in [(1, 3, 10.0, 600.0), (1, 8, 10.0, 600.0), (3, 6, 7.5, 250.0), (5, 17, 10.0, 600.0)] {
            let o = DomeOptions { rings, sectors, radius: a, load: Loading::Plan(p), crown_load: 0.0, ..DomeOptions::default() };
            let r = read(&lattice_dome(&o, "dome").unwrap());
            assert_eq!(r.loads.len(), 1 + (rings - 1) * sectors);
            let sin = (std::f64::consts::TAU / sectors as f64).sin();
            let r1 = a * (rings - 1) as f64 / rings as f64;
            let free = sectors as f64 * sin * (a * a / 2.0 - (a - r1) * (a + r1 / 2.0) / 3.0);
            assert!(rel(total_down(&r), p * free) < 1e-12, "{rings} x {sectors}");
            // The crown load adds to the crown's share.
            let with = DomeOptions { crown_load: 1000.0, ..o };
            let rw = read(&lattice_dome(&with, "dome").unwrap());
            assert!(rel(total_down(&rw), p * free + 1000.0) < 1e-12);
            let crown = |r: &Read| -r.loads.iter().find(|(n, _)| n == "C").unwrap().1[2];
            assert!((crown(&rw) - crown(&r) - 1000.0).abs() < 1e-9);
        }
    }

    // -- lattice dome -------------------------------------------------------

    #[test]
    fn dome_counts_ids_and_keys() {
        for (rings, sectors) in [(1, 3), (1, 8), (3, 6), (5, 17)] {
            let g = lattice_dome(&small_dome(rings, sectors), "dome").unwrap();
            assert!(g.csv.is_empty());
            let t = parse(&g.toml);
            let nodes = tables(&t, "node");
            let members = tables(&t, "member");
            assert_eq!(nodes.len(), 1 + rings * sectors);
            // Spokes, radials, diagonals, hoops.
            let expected = sectors + 2 * (rings - 1) * sectors + rings * sectors;
            assert_eq!(expected, sectors * (3 * rings - 1));
            assert_eq!(members.len(), expected);
            assert!(members.iter().all(|m| m["kind"].as_str() == Some("bar")));
            assert!(members.iter().all(|m| m.get("prestress").is_none()));
            let fixed = nodes.iter().filter(|n| n.get("fix").is_some()).count();
            assert_eq!(fixed, sectors);
            let loads = tables(&t, "load");
            assert_eq!(loads.len(), 1);
            assert_eq!(loads[0]["node"].as_str(), Some("C"));
            let f: Vec<f64> = loads[0]["force"]
                .as_array()
                .unwrap()
                .iter()
                .map(float)
                .collect();
            assert_eq!(f, [0.0, 0.0, -1000.0]);
            let a = t["analysis"].as_table().unwrap();
            assert_eq!(a["node"].as_str(), Some("C"));
            assert_eq!(a["dir"].as_str(), Some("z"));
            assert_eq!(a["control"].as_str(), Some("load"));
            assert_eq!(a["strain"].as_str(), Some("green"));
            assert_eq!(a["method"].as_str(), Some("newton"));
            assert_eq!(a["steps"].as_integer(), Some(10));
            assert_eq!(float(&a["target"]), 1.0);
            assert_eq!(a["watch"].as_array().unwrap()[0].as_str(), Some("C.z"));
            // Member ends are distinct and every node is used.
            let mut used = std::collections::HashSet::new();
            for m in &members {
                let e = m["ends"].as_array().unwrap();
                assert_ne!(e[0].as_str(), e[1].as_str());
                used.insert(e[0].as_str().unwrap().to_string());
                used.insert(e[1].as_str().unwrap().to_string());
            }
            assert_eq!(used.len(), nodes.len());
        }
    }

    #[test]
    fn dome_nodes_lie_on_the_spherical_cap() {
        let o = DomeOptions {
            rings: 4,
            sectors: 10,
            radius: 12.0,
            rise: 2.5,
            ..DomeOptions::default()
        };
        let r = read(&lattice_dome(&o, "dome").unwrap());
        let big_r = (12.0f64 * 12.0 + 2.5 * 2.5) / (2.0 * 2.5);
        assert_eq!(r.nodes["C"].0, [0.0, 0.0, 2.5]);
        for (id, (p, fixed)) in &r.nodes {
            let d = (p[0] * p[0] + p[1] * p[1] + (p[2] - (2.5 - big_r)).powi(2)).sqrt();
            assert!((d - big_r).abs() < 1e-9, "{id} {p:?}");
            assert_eq!(*fixed, id.starts_with("R04_"), "{id}");
            if *fixed {
                assert_eq!(p[2], 0.0);
                assert!(((p[0] * p[0] + p[1] * p[1]).sqrt() - 12.0).abs() < 1e-12);
            }
        }
        // Ring 2 sits at half the plan radius.
        let p = r.nodes["R02_00"].0;
        assert!((p[0] - 6.0).abs() < 1e-12 && p[1] == 0.0);
    }

    #[test]
    fn dome_is_triangulated() {
        // Every hoop bar of an inner ring closes two triangles: one with the
        // ring inside (or the crown) and one with the ring outside.
        let (rings, sectors) = (3, 7);
        let r = read(&lattice_dome(&small_dome(rings, sectors), "dome").unwrap());
        let mut edges = std::collections::HashSet::new();
        for (_, [a, b], _) in &r.members {
            edges.insert((a.clone(), b.clone()));
            edges.insert((b.clone(), a.clone()));
        }
        let has = |a: &str, b: &str| edges.contains(&(a.to_string(), b.to_string()));
        let id = |i: usize, j: usize| format!("R{i:02}_{:02}", j % sectors);
        for j in 0..sectors {
            assert!(has("C", &id(1, j)));
            for i in 1..=rings {
                assert!(has(&id(i, j), &id(i, j + 1)), "hoop {i} {j}");
            }
            for i in 1..rings {
                assert!(has(&id(i, j), &id(i + 1, j)), "radial {i} {j}");
                assert!(has(&id(i, j), &id(i + 1, j + 1)), "diagonal {i} {j}");
            }
        }
    }

    #[test]
    fn large_dome_goes_to_csv() {
        let (rings, sectors) = (6, 20);
        let o = DomeOptions {
            csv_threshold: 50,
            ..small_dome(rings, sectors)
        };
        let g = lattice_dome(&o, "cap").unwrap();
        let t = parse(&g.toml);
        assert_eq!(t["nodes_csv"].as_str(), Some("cap_nodes.csv"));
        assert_eq!(t["members_csv"].as_str(), Some("cap_members.csv"));
        assert_eq!(t["loads_csv"].as_str(), Some("cap_loads.csv"));
        assert!(tables(&t, "node").is_empty() && tables(&t, "member").is_empty());
        assert!(tables(&t, "load").is_empty());
        assert_eq!(g.csv[2].0, "cap_loads.csv");
        assert!(g.csv[2].1.starts_with("node,fx,fy,fz\nC,") && g.csv[2].1.lines().count() == 2);
        assert_eq!(g.csv[0].1.lines().count(), 1 + 1 + rings * sectors);
        assert_eq!(g.csv[1].1.lines().count(), 1 + sectors * (3 * rings - 1));
        let small = read(&lattice_dome(&small_dome(rings, sectors), "cap").unwrap());
        let big = read(&g);
        assert_eq!(small.nodes, big.nodes);
        assert_eq!(small.members, big.members);
        assert_eq!(small.loads, big.loads);
    }

    #[test]
    fn very_flat_domes_keep_their_shape() {
        let o = DomeOptions {
            rise: 1e-300,
            ..small_dome(4, 6)
        };
        let r = read(&lattice_dome(&o, "dome").unwrap());
        // z = rise·(1 − (r/radius)²) to first order in rise/radius.
        for (i, expect) in [(1, 0.9375e-300), (2, 0.75e-300), (3, 0.4375e-300), (4, 0.0)] {
            let z = r.nodes[&format!("R{i:02}_03")].0[2];
            assert!((z - expect).abs() <= 1e-12 * 1e-300, "ring {i}: {z}");
        }
    }

    // -- numbers ------------------------------------------------------------

    #[test]
    fn numbers_round_trip_through_toml() {
        for v in [
            0.0,
            -0.0,
            1.0,
            -2.5,
            1e-7,
            3e21,
            0.1 + 0.2,
            f64::MAX,
            f64::MIN_POSITIVE,
        ] {
            let text = format!("v = {}", num(v));
            let t = parse(&text);
            assert_eq!(float(&t["v"]), v, "{text}");
            assert_eq!(num(v).to_string().parse::<f64>().unwrap(), v);
        }
        assert_eq!(num(-0.0).to_string(), "0.0");
    }

    // -- the crate's own loader ----------------------------------------------

    #[test]
    fn generated_models_load() {
        let dir = temp_dir();
        let write = |name: &str, g: &Generated| -> crate::model::Model {
            for (file, text) in &g.csv {
                std::fs::write(dir.join(file), text).unwrap();
            }
            match crate::model::load_str(&g.toml, name, Some(&dir)) {
                Ok(m) => m,
                Err(e) => panic!("{name} does not load:\n{e}"),
            }
        };
        for threshold in [usize::MAX, 0] {
            let (nx, ny) = (7, 5);
            let o = NetOptions {
                csv_threshold: threshold,
                ..small_net(nx, ny)
            };
            let m = write("net.toml", &saddle_net(&o, "net").unwrap());
            assert_eq!(m.n_nodes(), nx * ny);
            assert_eq!(m.n_members(), (nx - 1) * ny + nx * (ny - 1));
            assert_eq!(m.n_fixed(), 3 * (2 * (nx + ny) - 4));
            assert_eq!(m.loads.len(), (nx - 2) * (ny - 2));
            assert_eq!(m.files.len(), if threshold == 0 { 4 } else { 1 });
            let centre = m.node_index("N003_002").unwrap();
            assert_eq!(m.analysis.point.map(|p| p.node), Some(centre));
            assert_eq!(m.analysis.watch.len(), 1);

            let o = NetOptions {
                edge: NetEdge::Elastic { k: 1e4 },
                csv_threshold: threshold,
                ..small_net(nx, ny)
            };
            let m = write("net-elastic.toml", &saddle_net(&o, "neto").unwrap());
            assert_eq!(m.n_fixed(), 0);
            assert_eq!(m.springs.len(), 3 * (2 * (nx + ny) - 4));
            assert_eq!(m.loads.len(), nx * ny);

            let (rings, sectors) = (3, 8);
            let o = DomeOptions {
                csv_threshold: threshold,
                ..small_dome(rings, sectors)
            };
            let m = write("dome.toml", &lattice_dome(&o, "dome").unwrap());
            assert_eq!(m.n_nodes(), 1 + rings * sectors);
            assert_eq!(m.n_members(), sectors * (3 * rings - 1));
            assert_eq!(m.n_fixed(), 3 * sectors);
            assert_eq!(m.loads.len(), 1);
            assert_eq!(m.analysis.point.map(|p| p.node), m.node_index("C"));
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
}
