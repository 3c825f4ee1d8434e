//! Units of a model file. Everything inside the library is N and m; values are
//! converted on the way in and back to the model's units on the way out.

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum ForceUnit {
    #[default]
    N,
    KN,
    MN,
    Lbf,
    Kip,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum LengthUnit {
    #[default]
    M,
    Cm,
    Mm,
    Ft,
    In,
}

impl ForceUnit {
    pub const NAMES: [&'static str; 5] = ["N", "kN", "MN", "lbf", "kip"];

    pub fn parse(s: &str) -> Option<ForceUnit> {
        Some(match s {
            "N" => ForceUnit::N,
            "kN" => ForceUnit::KN,
            "MN" => ForceUnit::MN,
            "lbf" => ForceUnit::Lbf,
            "kip" => ForceUnit::Kip,
            _ => return None,
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            ForceUnit::N => "N",
            ForceUnit::KN => "kN",
            ForceUnit::MN => "MN",
            ForceUnit::Lbf => "lbf",
            ForceUnit::Kip => "kip",
        }
    }

    /// Newtons in one unit. 1 lbf = 4.4482216152605 N (exact by definition of
    /// the pound-force from the international pound and standard gravity).
    pub fn to_si(self) -> f64 {
        match self {
            ForceUnit::N => 1.0,
            ForceUnit::KN => 1.0e3,
            ForceUnit::MN => 1.0e6,
            ForceUnit::Lbf => 4.448_221_615_260_5,
            ForceUnit::Kip => 4.448_221_615_260_5e3,
        }
    }
}

impl LengthUnit {
    pub const NAMES: [&'static str; 5] = ["m", "cm", "mm", "ft", "in"];

    pub fn parse(s: &str) -> Option<LengthUnit> {
        Some(match s {
            "m" => LengthUnit::M,
            "cm" => LengthUnit::Cm,
            "mm" => LengthUnit::Mm,
            "ft" => LengthUnit::Ft,
            "in" => LengthUnit::In,
            _ => return None,
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            LengthUnit::M => "m",
            LengthUnit::Cm => "cm",
            LengthUnit::Mm => "mm",
            LengthUnit::Ft => "ft",
            LengthUnit::In => "in",
        }
    }

    /// Metres in one unit (1 in = 0.0254 m exactly, 1 ft = 0.3048 m exactly).
    pub fn to_si(self) -> f64 {
        match self {
            LengthUnit::M => 1.0,
            LengthUnit::Cm => 0.01,
            LengthUnit::Mm => 0.001,
            LengthUnit::Ft => 0.3048,
            LengthUnit::In => 0.0254,
        }
    }
}

/// The units a model was written in.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub struct Units {
    pub force: ForceUnit,
    pub length: LengthUnit,
}

impl Units {
    /// Model force → N.
    pub fn force_in(&self, v: f64) -> f64 {
        v * self.force.to_si()
    }
    /// Model length → m.
    pub fn length_in(&self, v: f64) -> f64 {
        v * self.length.to_si()
    }
    /// Model force per length (line load, spring stiffness, force density) → N/m.
    pub fn force_per_length_in(&self, v: f64) -> f64 {
        v * self.force.to_si() / self.length.to_si()
    }
    /// N → model force.
    pub fn force_out(&self, v: f64) -> f64 {
        v / self.force.to_si()
    }
    /// m → model length.
    pub fn length_out(&self, v: f64) -> f64 {
        v / self.length.to_si()
    }
    /// N/m → model force per length.
    pub fn force_per_length_out(&self, v: f64) -> f64 {
        v * self.length.to_si() / self.force.to_si()
    }
}
