//! The lattice dome: a shallow triangulated dome of bars on a spherical cap.

use super::draft::{Draft, Kind};
use super::text::num;
use super::{Generated, Loading, check_stem, digits, finite, node_count, positive, tributary_areas};

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

/// A shallow triangulated dome on a spherical cap: a crown node and `rings`
/// rings of `sectors` nodes, the outer ring supported on the plane z = 0.
///
/// Bars join the crown to ring 1, each ring node to the same sector of the
/// next ring (radial) and to the next sector of the next ring (diagonal), and
/// neighbours within a ring (hoop). The bars are unstressed in the generated
/// geometry. `stem` is as in [`saddle_net`](super::saddle_net).
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
