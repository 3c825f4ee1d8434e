//! The `[units]` table: the force and length units the file's numbers are in
//! (a load file may have its own).

use toml::Spanned;

use crate::model::file::UnitsEntry;
use crate::model::{ForceUnit, LengthUnit, Units};
use super::context::{Ctx, Item, Toml};
use super::suggest;

pub(super) fn units(cx: &mut Ctx, t: &Toml, entry: Option<&Spanned<UnitsEntry>>) -> Units {
    let mut u = Units::default();
    let Some(entry) = entry else { return u };
    let item = Item::Plain("[units]");
    if let Some(f) = &entry.get_ref().force {
        match ForceUnit::parse(f.get_ref()) {
            Some(v) => u.force = v,
            None => cx.error(
                t.at(f),
                item,
                format!("unknown force unit {:?}", f.get_ref()),
                suggest::choice_help(f.get_ref(), &ForceUnit::NAMES),
            ),
        }
    }
    if let Some(l) = &entry.get_ref().length {
        match LengthUnit::parse(l.get_ref()) {
            Some(v) => u.length = v,
            None => cx.error(
                t.at(l),
                item,
                format!("unknown length unit {:?}", l.get_ref()),
                suggest::choice_help(l.get_ref(), &LengthUnit::NAMES),
            ),
        }
    }
    u
}
