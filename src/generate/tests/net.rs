//! The saddle net.

use super::*;

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
