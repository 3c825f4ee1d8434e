//! References, members, names and letters.

use super::{BASE, errors, expect, line_of, with};

// -- references -------------------------------------------------------

#[test]
fn unknown_nodes_everywhere_suggest_a_near_id() {
    let text = with(
        "[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"A\", \"Bx\"]\nsection = \"strand\"\n\
         [[spring]]\nnode = \"Q\"\ndir = \"x\"\nk = 1.0\n\
         [[load]]\nnode = \"R\"\nforce = [1, 0, 0]\n\
         [analysis]\nnode = \"S\"\ndir = \"x\"\nwatch = [\"T.x\"]\n",
    );
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"Bx\""),
        "member \"m2\"",
        "unknown node \"Bx\" in `ends`",
    );
    assert_eq!(d.help.as_deref(), Some("did you mean \"B\"?"));
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"Q\""),
        "spring 1",
        "unknown node \"Q\"",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"R\""),
        "load 2",
        "unknown node \"R\"",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"S\""),
        "[analysis]",
        "unknown node \"S\" in `node`",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"T.x\""),
        "[analysis]",
        "unknown node \"T\" in `watch`",
    );
}

#[test]
fn unknown_section_suggests_a_near_name() {
    let text = BASE.replace("section = \"strand\"", "section = \"strnad\"");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "strnad"),
        "member \"m1\"",
        "unknown section \"strnad\"",
    );
    assert_eq!(d.help.as_deref(), Some("did you mean \"strand\"?"));
}

#[test]
fn duplicates_point_at_the_second_and_name_the_first() {
    let text = with(
        "[[section]]\nname = \"strand\"\nEA = 5.0\n\
         [[node]]\nid = \"B\"\nat = [2, 0, 0]\n\
         [[member]]\nid = \"m1\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\n",
    );
    let ds = errors(&text);
    let first_sec = line_of(&text, "[[section]]");
    let second_sec = line_of(&text, "[[section]]\nname = \"strand\"\nEA = 5.0");
    let d = expect(
        &ds,
        "m.toml",
        second_sec,
        "section \"strand\"",
        "duplicate section name",
    );
    assert!(d.message.contains(&format!("m.toml:{first_sec}")), "{d}");
    let second_node = line_of(&text, "[[node]]\nid = \"B\"\nat = [2");
    let d = expect(
        &ds,
        "m.toml",
        second_node,
        "node \"B\"",
        "duplicate node id",
    );
    assert!(
        d.message
            .contains(&format!("m.toml:{}", line_of(&text, "id = \"B\"") - 1)),
        "{d}"
    );
    let last_member = text.rfind("[[member]]").unwrap();
    let line = text[..last_member].matches('\n').count() + 1;
    expect(&ds, "m.toml", line, "member \"m1\"", "duplicate member id");
}

// -- members ----------------------------------------------------------

#[test]
fn member_on_one_node_and_zero_length_member() {
    let text = with(
        "[[node]]\nid = \"C\"\nat = [1, 0, 0]\n\
         [[member]]\nid = \"same\"\nkind = \"bar\"\nends = [\"B\", \"B\"]\nsection = \"strand\"\n\
         [[member]]\nid = \"short\"\nkind = \"bar\"\nends = [\"B\", \"C\"]\nsection = \"strand\"\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "[\"B\", \"B\"]"),
        "member \"same\"",
        "both ends are node \"B\"",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "id = \"short\"") - 1,
        "member \"short\"",
        "zero length",
    );
}

#[test]
fn bad_numbers_in_sections_members_and_springs() {
    let text = with(
        "[[section]]\nname = \"bad\"\nEA = -1.0\nweight = -0.1\ntension_capacity = 0.0\ncompression_capacity = nan\n\
         [[section]]\nname = \"inf\"\nEA = inf\n\
         [[member]]\nid = \"both\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\nsection = \"bad\"\nprestress = 1.0\nrest_length = 2.0\n\
         [[member]]\nid = \"slack\"\nkind = \"cable\"\nends = [\"A\", \"B\"]\nsection = \"inf\"\nprestress = -3.0\n\
         [[member]]\nid = \"short\"\nkind = \"cable\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\nrest_length = 0.0\n\
         [[spring]]\nnode = \"B\"\ndir = \"x\"\nk = 0.0\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "EA = -1.0"),
        "section \"bad\"",
        "`EA` must be greater than zero",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "EA = inf"),
        "section \"inf\"",
        "`EA` must be a finite number, found inf",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "weight = -0.1"),
        "section \"bad\"",
        "`weight` must be zero or more",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "tension_capacity"),
        "section \"bad\"",
        "`tension_capacity` must be greater than zero",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "compression_capacity"),
        "section \"bad\"",
        "found nan",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "rest_length = 2.0"),
        "member \"both\"",
        "both `prestress` and `rest_length`",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "prestress = -3.0"),
        "member \"slack\"",
        "a cable cannot carry compression",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "rest_length = 0.0"),
        "member \"short\"",
        "`rest_length` must be greater than zero",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "k = 0.0"),
        "spring 1",
        "`k` must be greater than zero",
    );
}

#[test]
fn nan_coordinates_and_loads_are_rejected() {
    let text = with(
        "[[node]]\nid = \"C\"\nat = [0, nan, 0]\n[[load]]\nnode = \"B\"\nforce = [-inf, 0, 0]\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "nan"),
        "node \"C\"",
        "`at` must be a finite number",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "-inf"),
        "load 2",
        "`force` must be a finite number",
    );
}

// -- names and letters ------------------------------------------------

#[test]
fn invalid_fix_dir_and_kind() {
    let text = with(
        "[[node]]\nid = \"C\"\nat = [0, 0, 1]\nfix = \"xw\"\n\
         [[node]]\nid = \"D\"\nat = [0, 0, 2]\nfix = \"zz\"\n\
         [[spring]]\nnode = \"C\"\ndir = \"up\"\nk = 1.0\n\
         [[member]]\nid = \"m2\"\nkind = \"rope\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"xw\""),
        "node \"C\"",
        "invalid letter 'w'",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"zz\""),
        "node \"D\"",
        "appears twice",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "\"up\""),
        "spring 1",
        "invalid `dir` \"up\"",
    );
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"rope\""),
        "member \"m2\"",
        "unknown member kind",
    );
    assert!(d.help.unwrap().contains("bar, cable"));
}

#[test]
fn invalid_names_list_the_valid_ones() {
    let text = format!(
        "[units]\nforce = \"kn\"\nlength = \"yd\"\n{}",
        with("[analysis]\nstrain = \"log\"\nmethod = \"newtn\"\ncontrol = \"force\"\n")
            .replace("title = \"base\"\n", "")
    );
    let ds = errors(&text);
    let d = expect(&ds, "m.toml", 2, "[units]", "unknown force unit \"kn\"");
    assert!(d.help.unwrap().starts_with("did you mean \"kN\"?"));
    let d = expect(&ds, "m.toml", 3, "[units]", "unknown length unit \"yd\"");
    assert!(d.help.unwrap().contains("m, cm, mm, ft, in"));
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"log\""),
        "[analysis]",
        "unknown strain measure",
    );
    assert!(d.help.unwrap().contains("green, engineering"));
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"newtn\""),
        "[analysis]",
        "unknown method",
    );
    assert!(d.help.unwrap().starts_with("did you mean \"newton\"?"));
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"force\""),
        "[analysis]",
        "unknown control",
    );
    assert!(d.help.unwrap().contains("load, displacement, arc-length"));
}

#[test]
fn load_on_a_support_is_an_error() {
    let text = BASE.replace("force = [1, 0, 0]", "force = [1, 0, -2]");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "force = [1, 0, -2]"),
        "load 1",
        "z component of -2 on node \"B\"",
    );
    assert!(d.help.unwrap().contains("remove the load or the support"));
}
