//! Unit tests of the generators: helpers that read a generated model back,
//! and what both generators share; `tests/net.rs` and `tests/dome.rs` hold
//! each generator's own.

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

// -- plan-area loads ------------------------------------------------------

/// Sum of the downward loads written, N.
fn total_down(r: &Read) -> f64 {
    r.loads.iter().map(|(_, f)| -f[2]).sum()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
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

mod dome;
mod net;
