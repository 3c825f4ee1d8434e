//! The lattice dome.

use super::*;

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
