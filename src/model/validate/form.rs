//! The `[form]` table: form-finding method, tolerance, iterations and the
//! default force density.

use toml::Spanned;

use crate::model::file::FormEntry;
use crate::model::{FormMethod, FormSettings};
use super::context::*;
use super::suggest;

pub(super) fn form(cx: &mut Ctx, t: &Toml, entry: Option<&Spanned<FormEntry>>) -> FormSettings {
    let mut f = FormSettings::default();
    let Some(e) = entry.map(|e| e.get_ref()) else {
        return f;
    };
    let item = Item::Plain("[form]");
    if let Some(v) = &e.method {
        match FormMethod::parse(v.get_ref()) {
            Some(m) => f.method = m,
            None => cx.error(
                t.at(v),
                item,
                format!("unknown method {:?}", v.get_ref()),
                suggest::choice_help(v.get_ref(), &FormMethod::NAMES),
            ),
        }
    }
    f.max_iterations = FormSettings::default_max_iterations(f.method);
    if let Some(v) = &e.tolerance {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "tolerance", Rule::Positive, "a relative tolerance, e.g. 1e-9")
        {
            if x > 0.1 {
                cx.error(t.at(v), item, format!("`tolerance` must be at most 0.1, found {}", fmt_num(x)), "a relative tolerance, e.g. 1e-9");
            } else {
                f.tolerance = x;
            }
        }
    }
    if let Some(v) = &e.max_iterations {
        let n = *v.get_ref();
        if n < 1 {
            cx.error(t.at(v), item, format!("`max_iterations` must be at least 1, found {n}"), "a whole number of iterations, e.g. 200");
        } else {
            f.max_iterations = usize::try_from(n).unwrap_or(usize::MAX);
        }
    }
    let Some(v) = e.force_density.as_ref() else {
        return f;
    };
    let x = *v.get_ref();
    let help = "the default force density is a positive force per length; give compressed members their own";
    if check_number(
        cx,
        x,
        t.at(v),
        Item::Plain("[form]"),
        "force_density",
        Rule::Positive,
        help,
    ) {
        f.force_density = Some(cx.units.force_per_length_in(x));
    }
    f
}
