//! Integer ids (issue 14): a model whose node, member and section ids are
//! TOML integers solves exactly as the same model with string ids.

use crate::common::{model, trace};
use std::collections::HashMap;
use tautline::generate::{NetOptions, saddle_net};
use tautline::model::Method;
use toml::{Table, Value};

/// The generated net with every id replaced by a TOML integer (nodes 1..,
/// members 1.., the section 1), references and watch entries rewritten to
/// match.
fn with_integer_ids(text: &str) -> String {
    let mut t: Table = text.parse().unwrap();
    let number = |key: &str, field: &str, t: &mut Table| -> HashMap<String, i64> {
        let mut map = HashMap::new();
        for (k, e) in t[key].as_array_mut().unwrap().iter_mut().enumerate() {
            let e = e.as_table_mut().unwrap();
            map.insert(e[field].as_str().unwrap().to_string(), k as i64 + 1);
            e[field] = Value::Integer(k as i64 + 1);
        }
        map
    };
    let nodes = number("node", "id", &mut t);
    let sections = number("section", "name", &mut t);
    let _ = number("member", "id", &mut t);
    let int = |map: &HashMap<String, i64>, v: &Value| Value::Integer(map[v.as_str().unwrap()]);
    for m in t["member"].as_array_mut().unwrap() {
        let m = m.as_table_mut().unwrap();
        let ends: Vec<Value> = m["ends"].as_array().unwrap().iter().map(|e| int(&nodes, e)).collect();
        m["ends"] = Value::Array(ends);
        m["section"] = int(&sections, &m["section"]);
    }
    for l in t["load"].as_array_mut().unwrap() {
        let l = l.as_table_mut().unwrap();
        l["node"] = int(&nodes, &l["node"]);
    }
    let a = t["analysis"].as_table_mut().unwrap();
    a["node"] = int(&nodes, &a["node"]);
    let watch: Vec<Value> = a["watch"]
        .as_array()
        .unwrap()
        .iter()
        .map(|w| {
            let (node, dir) = w.as_str().unwrap().rsplit_once('.').unwrap();
            Value::String(format!("{}.{dir}", nodes[node]))
        })
        .collect();
    a["watch"] = Value::Array(watch);
    toml::to_string(&t).unwrap()
}

#[test]
fn integer_ids_solve_exactly_as_string_ids() {
    let g = saddle_net(&NetOptions { nx: 9, ny: 8, ..NetOptions::default() }, "net").unwrap();
    let ints = with_integer_ids(&g.toml);
    assert!(ints.contains("ends = [1, 2]") && ints.contains("id = 72") && ints.contains("section = 1"), "{ints}");
    let (a, b) = (model(&g.toml), model(&ints));
    assert_eq!(b.nodes[71].label, "72");
    assert_eq!(a.analysis.point.map(|p| p.node), b.analysis.point.map(|p| p.node));
    for method in [Method::Newton, Method::Bfgs] {
        let (ra, rb) = (trace(a.clone(), method), trace(b.clone(), method));
        assert_eq!(ra.path.stop, rb.path.stop, "{method:?}");
        assert_eq!(ra.path.points.len(), rb.path.points.len(), "{method:?}");
        for (p, q) in ra.path.points.iter().zip(&rb.path.points) {
            assert_eq!(p.lambda.to_bits(), q.lambda.to_bits(), "{method:?}");
            assert_eq!(p.watched, q.watched, "{method:?}");
        }
        assert_eq!(ra.path.final_state.u, rb.path.final_state.u, "{method:?}");
    }
}
