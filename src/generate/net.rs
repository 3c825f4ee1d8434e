//! The saddle net: a hyperbolic-paraboloid cable net on a plan grid,
//! prestressed to equilibrium.

use super::draft::{Draft, Kind};
use super::text::num;
use super::{Generated, Loading, check_stem, digits, finite, node_count, positive, tributary_areas};

/// How the boundary of a saddle net is held.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum NetEdge {
    /// Boundary nodes are supported in x, y and z.
    Fixed,
    /// Boundary nodes are free, each tied to the ground by three springs
    /// (x, y and z) of stiffness `k`, N/m.
    Elastic { k: f64 },
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
