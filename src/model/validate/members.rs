//! `[[section]]` entries, and `[[member]]` entries and `members_csv` rows
//! (one `RawMember` shape): kind, ends, section, rest length or prestress,
//! force density and form-finding targets.

use toml::Spanned;

use crate::model::file::MemberEntry;
use crate::model::{FormTarget, Member, MemberKind, RestSpec, Section};
use super::context::*;
use super::refs::Refs;
use super::suggest;

/// Members shorter than this fraction of the model's size have zero length.
const ZERO_LENGTH: f64 = 1e-12;

pub(super) fn section(cx: &mut Ctx, t: &Toml, s: &Spanned<crate::model::file::SectionEntry>) -> Section {
    let e = s.get_ref();
    let name = e.name.get_ref();
    let item = Item::Named("section", name);
    check_label(cx, t.at(&e.name), item, "name", name);
    if name.is_empty() {
        cx.error(
            t.at(&e.name),
            item,
            "section name is empty",
            "give the section a name, e.g. name = \"strand\"",
        );
    }
    let ea = *e.ea.get_ref();
    check_number(
        cx,
        ea,
        t.at(&e.ea),
        item,
        "EA",
        Rule::Positive,
        "EA is the axial rigidity E·A, a force; it must be positive",
    );
    let u = cx.units;
    let mut optional = |v: &Option<Spanned<f64>>, key: &str, rule: Rule, help: &str| {
        v.as_ref().map(|v| {
            check_number(cx, *v.get_ref(), t.at(v), item, key, rule, help);
            *v.get_ref()
        })
    };
    let weight = optional(
        &e.weight,
        "weight",
        Rule::NonNegative,
        "weight is a force per length acting downwards; write it as a positive number",
    );
    let tension = optional(
        &e.tension_capacity,
        "tension_capacity",
        Rule::Positive,
        "capacities are positive forces; leave the key out for no limit",
    );
    let compression = optional(
        &e.compression_capacity,
        "compression_capacity",
        Rule::Positive,
        "write the compression capacity as a positive force; leave the key out for no limit",
    );
    Section {
        name: name.clone(),
        ea: u.force_in(ea),
        weight: weight.map(|w| u.force_per_length_in(w)),
        tension_capacity: tension.map(|v| u.force_in(v)),
        compression_capacity: compression.map(|v| u.force_in(v)),
        place: t.at(s).place(),
    }
}

/// A member as read from either source, before checks.
pub(super) struct RawMember<'a> {
    pub(super) label: &'a str,
    pub(super) place: Src,
    /// Where the id itself was written.
    pub(super) label_src: Src,
    pub(super) kind: (&'a str, Src),
    pub(super) ends: [(&'a str, Src); 2],
    pub(super) end_keys: [&'static str; 2],
    pub(super) section: (&'a str, Src),
    pub(super) prestress: Option<(f64, Src)>,
    pub(super) rest_length: Option<(f64, Src)>,
    pub(super) force_density: Option<(f64, Src)>,
    pub(super) target_force: Option<(f64, Src)>,
    pub(super) target_length: Option<(f64, Src)>,
}

pub(super) fn toml_member<'a>(t: &Toml, m: &'a Spanned<MemberEntry>) -> RawMember<'a> {
    let e = m.get_ref();
    let ends = e.ends.get_ref();
    let opt = |v: &Option<Spanned<f64>>| v.as_ref().map(|v| (*v.get_ref(), t.at(v)));
    RawMember {
        label: e.id.get_ref(),
        place: t.at(m),
        label_src: t.at(&e.id),
        kind: (e.kind.get_ref(), t.at(&e.kind)),
        ends: [
            (ends[0].get_ref(), t.at(&ends[0])),
            (ends[1].get_ref(), t.at(&ends[1])),
        ],
        end_keys: ["ends", "ends"],
        section: (e.section.get_ref(), t.at(&e.section)),
        prestress: opt(&e.prestress),
        rest_length: opt(&e.rest_length),
        force_density: opt(&e.force_density),
        target_force: opt(&e.target_force),
        target_length: opt(&e.target_length),
    }
}

pub(super) fn add_member(
    cx: &mut Ctx,
    raw: &RawMember,
    refs: &Refs,
    members: &mut Vec<Member>,
    attached: &mut [bool],
    section_used: &mut [bool],
) {
    let item = Item::Named("member", raw.label);
    check_label(cx, raw.label_src, item, "id", raw.label);
    if raw.label.is_empty() {
        cx.error(
            raw.place,
            item,
            "member id is empty",
            "give the member an id, e.g. id = \"c1\"",
        );
    }
    let kind = match raw.kind.0 {
        "bar" => Some(MemberKind::Bar),
        "cable" => Some(MemberKind::Cable),
        "catenary" => Some(MemberKind::Catenary),
        other => {
            cx.error(
                raw.kind.1,
                item,
                format!("unknown member kind {other:?}"),
                suggest::choice_help(other, &MemberKind::NAMES),
            );
            None
        }
    };
    let ends = [0, 1].map(|k| refs.node(cx, raw.ends[k].0, raw.ends[k].1, item, raw.end_keys[k]));
    // Mark ends as attached even if the member is broken, so its nodes are
    // not also reported as free-floating.
    for &i in ends.iter().flatten() {
        attached[i] = true;
    }
    let geometry_ok = match ends {
        [Some(i), Some(j)] => check_ends(cx, raw, refs, i, j, item),
        _ => false,
    };
    let section = refs.section(cx, raw.section.0, raw.section.1, item, "section");
    if let Some(s) = section {
        section_used[s] = true;
    }
    let rest = rest_spec(cx, raw, kind, item);
    let force_density = raw.force_density.and_then(|(v, src)| {
        if !check_number(cx, v, src, item, "force_density", Rule::Finite, "") {
            return None;
        }
        if kind.is_some_and(MemberKind::tension_only) && v < 0.0 {
            cx.error(
                src,
                item,
                format!(
                    "a cable cannot carry compression, but `force_density` is {}",
                    fmt_num(v)
                ),
                "use a positive force density, or make the member a bar",
            );
        }
        Some(cx.units.force_per_length_in(v))
    });
    let target = form_target(cx, raw, refs, ends, item);
    if let (Some(kind), [Some(i), Some(j)], Some(section), true) =
        (kind, ends, section, geometry_ok)
    {
        members.push(Member {
            label: raw.label.to_string(),
            kind,
            ends: [i, j],
            section,
            rest,
            force_density,
            target,
            place: raw.place.place(),
        });
    }
}

/// `target_force` / `target_length` → the member's form-finding target.
pub(super) fn form_target(
    cx: &mut Ctx,
    raw: &RawMember,
    refs: &Refs,
    ends: [Option<usize>; 2],
    item: Item,
) -> Option<FormTarget> {
    let u = cx.units;
    let held = |k: Option<usize>| k.is_some_and(|k| refs.nodes[k].fixed == [true; 3]);
    let fixed_fixed = held(ends[0]) && held(ends[1]);
    match (raw.target_force, raw.target_length) {
        (Some(_), Some((_, src))) => {
            cx.error(
                src,
                item,
                "both `target_force` and `target_length` are given",
                "give one target per member: the force or the length the found shape must have",
            );
            None
        }
        (Some((t, src)), None) => {
            if !check_number(
                cx,
                t,
                src,
                item,
                "target_force",
                Rule::Positive,
                "a target force is a tension, greater than zero",
            ) {
                return None;
            }
            if fixed_fixed {
                cx.warn(
                    src,
                    item,
                    "both ends are supported in x, y and z: the member does not shape the form",
                    "its force is set directly as target_force / length; remove the target if that is not meant",
                );
            }
            Some(FormTarget::Force(u.force_in(t)))
        }
        (None, Some((l, src))) => {
            if !check_number(
                cx,
                l,
                src,
                item,
                "target_length",
                Rule::Positive,
                "a target length is a positive length",
            ) {
                return None;
            }
            if fixed_fixed {
                let drawn = match ends {
                    [Some(i), Some(j)] => (0..3)
                        .map(|k| (refs.nodes[j].at[k] - refs.nodes[i].at[k]).powi(2))
                        .sum::<f64>()
                        .sqrt(),
                    _ => 0.0,
                };
                let target = u.length_in(l);
                if (drawn - target).abs() > 1e-9 * drawn.max(target) {
                    cx.error(
                        src,
                        item,
                        format!(
                            "both ends are supported in x, y and z, so the length stays {}; \
                             form finding cannot make it {}",
                            fmt_num(u.length_out(drawn)),
                            fmt_num(l)
                        ),
                        "remove `target_length`, or free a direction of one end",
                    );
                    return None;
                }
            }
            Some(FormTarget::Length(u.length_in(l)))
        }
        (None, None) => None,
    }
}

/// Two different nodes at different places.
pub(super) fn check_ends(cx: &mut Ctx, raw: &RawMember, refs: &Refs, i: usize, j: usize, item: Item) -> bool {
    let (a, b) = (&refs.nodes[i], &refs.nodes[j]);
    if i == j {
        cx.error(
            raw.ends[1].1,
            item,
            format!("both ends are node {:?}", a.label),
            "a member joins two different nodes",
        );
        return false;
    }
    let len = (0..3)
        .map(|k| (b.at[k] - a.at[k]).powi(2))
        .sum::<f64>()
        .sqrt();
    // A non-finite length comes from a coordinate already reported.
    if len.is_finite() && len <= ZERO_LENGTH * refs.size {
        cx.error(
            raw.place,
            item,
            format!(
                "member has zero length: nodes {:?} and {:?} are at the same place",
                a.label, b.label
            ),
            "move one of the nodes, or remove the member",
        );
        return false;
    }
    true
}

/// `prestress` / `rest_length` → how the unstressed length is given.
pub(super) fn rest_spec(cx: &mut Ctx, raw: &RawMember, kind: Option<MemberKind>, item: Item) -> RestSpec {
    let u = cx.units;
    match (raw.prestress, raw.rest_length) {
        (Some(_), Some((_, src))) => {
            cx.error(
                src,
                item,
                "both `prestress` and `rest_length` are given",
                "give one: `prestress` is the force in the drawn geometry, `rest_length` the unstressed length",
            );
            RestSpec::Geometry
        }
        (Some((p, src)), None) => {
            if !check_number(cx, p, src, item, "prestress", Rule::Finite, "") {
                return RestSpec::Geometry;
            }
            match kind {
                Some(MemberKind::Catenary) => cx.error(
                    src,
                    item,
                    "a catenary member takes its unstressed length from `rest_length`, not `prestress`",
                    "write rest_length = the unstretched cable length (omit both to use the node-to-node distance)",
                ),
                Some(MemberKind::Cable) if p < 0.0 => cx.error(
                    src,
                    item,
                    format!(
                        "a cable cannot carry compression, but `prestress` is {}",
                        fmt_num(p)
                    ),
                    "use a positive prestress, or make the member a bar",
                ),
                Some(MemberKind::Bar) if p != 0.0 => cx.warn(
                    src,
                    item,
                    format!(
                        "bar has a prestress of {} {}: it starts loaded in the drawn geometry",
                        fmt_num(p),
                        u.force.name()
                    ),
                    "remove `prestress` if the bar should start unstressed",
                ),
                _ => {}
            }
            RestSpec::Prestress(u.force_in(p))
        }
        (None, Some((l, src))) => {
            if check_number(
                cx,
                l,
                src,
                item,
                "rest_length",
                Rule::Positive,
                "the unstressed length of a member is a positive length",
            ) {
                RestSpec::Length(u.length_in(l))
            } else {
                RestSpec::Geometry
            }
        }
        (None, None) => RestSpec::Geometry,
    }
}

pub(super) fn unused_sections(cx: &mut Ctx, sections: &[Section], used: &[bool]) {
    for (s, _) in sections.iter().zip(used).filter(|(_, u)| !**u) {
        cx.warn(
            Src {
                file: s.place.file,
                line: s.place.line,
                col: 0,
            },
            Item::Named("section", &s.name),
            "section is not used by any member",
            "remove it, or check the `section` of your members for a typo",
        );
    }
}
