//! The closed forms the built-in cases are checked against (public, so the
//! integration tests check the same formulas): each says where it comes
//! from, "derived" where it is worked out here.

/// Two-bar arch of VERIFICATION case 1: half-span b, rise h, axial rigidity EA.
#[derive(Clone, Copy, Debug)]
pub struct Arch {
    pub ea: f64,
    pub b: f64,
    pub h: f64,
}

/// The arch of the cases: b = 5 m, h = 1 m, EA = 1280 MN.
pub const ARCH: Arch = Arch { ea: 1.28e9, b: 5.0, h: 1.0 };

impl Arch {
    fn l0(&self) -> f64 {
        (self.b * self.b + self.h * self.h).sqrt()
    }

    /// Crown load P(w) for a crown deflection w (down positive), from
    /// equilibrium of the deformed crown, z = h − w, l = √(b² + z²).
    /// Engineering strain, N = EA (l − l₀)/l₀: P = 2EA (l₀ − l)/l₀ · z/l.
    /// Green-Lagrange, S = E·E_GL on the reference area: P = EA z (h² − z²)/l₀³.
    pub fn load(&self, w: f64, green: bool) -> f64 {
        let z = self.h - w;
        let l0 = self.l0();
        if green {
            self.ea * z * (self.h * self.h - z * z) / l0.powi(3)
        } else {
            let l = (self.b * self.b + z * z).sqrt();
            2.0 * self.ea * (l0 - l) / l0 * z / l
        }
    }

    /// Limit load and crown deflection at it. Engineering: P_lim = 2EA sin³θ_c
    /// with cos θ_c = (cos α)^(1/3) (Bažant & Cedolin 1991, eq. 4.4.5), and
    /// z = b·tan θ_c; Green-Lagrange: P_lim = 2EA h³/(3√3 l₀³) at z = h/√3
    /// (dP/dz = EA (h² − 3z²)/l₀³ = 0).
    pub fn limit(&self, green: bool) -> (f64, f64) {
        let l0 = self.l0();
        if green {
            (2.0 * self.ea * self.h.powi(3) / (3.0 * 3f64.sqrt() * l0.powi(3)), self.h - self.h / 3f64.sqrt())
        } else {
            let cos_c = (self.b / l0).cbrt();
            let sin_c = (1.0 - cos_c * cos_c).sqrt();
            (2.0 * self.ea * sin_c.powi(3), self.h - self.b * sin_c / cos_c)
        }
    }

    /// Crown deflection for a load below the limit, by bisection on [0, w_lim].
    pub fn deflection(&self, p: f64, green: bool) -> f64 {
        let (_, w_lim) = self.limit(green);
        bisect(|w| self.load(w, green) - p, 0.0, w_lim)
    }
}

/// Pretensioned straight cable of two halves of length l each (EA, pretension
/// t, engineering strain) with a midspan load P: from equilibrium of the
/// loaded node, P = 2·EA(l_c − L_r)/L_r · w/l_c with l_c = √(l² + w²) and the
/// rest length L_r = l·EA/(EA + t). Returns the deflection w for a load P.
pub fn pretensioned_cable_deflection_closed_form(l: f64, ea: f64, t: f64, p: f64) -> f64 {
    let lr = l * ea / (ea + t);
    let load = |w: f64| {
        let lc = (l * l + w * w).sqrt();
        2.0 * ea * (lc - lr) / lr * w / lc
    };
    bisect(|w| load(w) - p, 0.0, l)
}

/// Force density chain of n segments, load P on every inner node, force
/// density q, level supports: z equilibrium q(z_{i−1} − 2z_i + z_{i+1}) = P
/// is met by z_i = −P·i(n − i)/(2q) (H.-J. Schek, "The force density method
/// for form finding and computation of general networks", Comput. Methods
/// Appl. Mech. Eng. 3, 1974).
pub fn chain_height(i: usize, n: usize, p: f64, q: f64) -> f64 {
    -p * (i * (n - i)) as f64 / (2.0 * q)
}

/// Straight strut of two bars of length L (EA), braced at mid-height by a
/// lateral spring k: the mid node's lateral stiffness k − 2P/l with the
/// shortened l = L(1 − P/EA) vanishes at P_cr = (kL/2)/(1 + kL/(2EA)).
pub fn braced_strut_critical_load(k: f64, l: f64, ea: f64) -> f64 {
    (k * l / 2.0) / (1.0 + k * l / (2.0 * ea))
}

/// Span l and rise h of an elastic catenary from its end forces: H. M.
/// Irvine, *Cable Structures*, MIT Press, 1981, ch. 1 (the elastic
/// catenary), with V the upward force of the support at the lower end A,
/// W = w·L0 the cable's weight:
/// l = H·L0/EA + (H/w)·[asinh(V/H) − asinh((V − W)/H)],
/// h = (W·L0/EA)·(1/2 − V/W) + (1/w)·[√(H² + (W − V)²) − √(H² + V²)].
pub fn irvine_span_rise(hh: f64, v: f64, l0: f64, ea: f64, w: f64) -> (f64, f64) {
    let big_w = w * l0;
    let span = hh * l0 / ea + hh / w * ((v / hh).asinh() - ((v - big_w) / hh).asinh());
    let rise = big_w * l0 / ea * (0.5 - v / big_w) + ((hh * hh + (big_w - v).powi(2)).sqrt() - (hh * hh + v * v).sqrt()) / w;
    (span, rise)
}

/// Root of an increasing function on [lo, hi] by bisection.
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 { lo = mid } else { hi = mid }
    }
    0.5 * (lo + hi)
}

/// Half-span b, rise h and EA of the steep two-leg arch and the four-leg
/// pyramid; the crown load is 1e5 N per unit load factor.
pub const STEEP: (f64, f64, f64) = (1.0, 3.0, 1.0e6);

/// Crown load per unit load factor, N.
pub const STEEP_LOAD: f64 = 1.0e5;

/// The crown load P at crown height z (derived): each leg of length
/// l = √(b² + z²) carries N = EA(l − L)/L (engineering strain, L = √(b² + h²)),
/// and vertical equilibrium gives P = −n·N·z/l = n·EA·(z/l − z/L).
pub fn steep_load(legs: usize, z: f64) -> f64 {
    let (b, h, ea) = STEEP;
    let (l0, l) = ((b * b + h * h).sqrt(), (b * b + z * z).sqrt());
    legs as f64 * ea * (z / l - z / l0)
}

/// Crown height at the limit point (derived): dP/dz = n·EA·(b²/l³ − 1/L) = 0,
/// so l³ = b²·L. The load there is the limit load.
pub fn steep_limit_load(legs: usize) -> f64 {
    let (b, h, _) = STEEP;
    let l0 = (b * b + h * h).sqrt();
    let l = (b * b * l0).cbrt();
    steep_load(legs, (l * l - b * b).sqrt())
}

/// Crown loads at the bifurcations of the symmetric path (derived): the
/// crown's lateral (x) stiffness on that path, from the bar tangent
/// (EA/L)·e·eᵀ + (N/l)·(I − e·eᵀ) of each leg, is
/// k_x = 2·[(EA/L)·b²/l² + (N/l)·z²/l²] (+ 2N/l from the two legs along y
/// of the pyramid, which add only geometric stiffness across them). Every z
/// in (0, h) where k_x changes sign (scanned in steps of h/10⁴, then
/// bisected to round-off), from the top down: for b = 1, h = 3 the first
/// lies before the limit point (k_x falls through zero as the legs shorten)
/// and the second after it (k_x recovers as the crown nears the supports'
/// level). The pyramid's y stiffness is the same by symmetry: its points are
/// double.
pub fn steep_bifurcation_loads(legs: usize) -> Vec<f64> {
    let (b, h, ea) = STEEP;
    let l0 = (b * b + h * h).sqrt();
    let kx = |z: f64| {
        let l = (b * b + z * z).sqrt();
        let n = ea * (l - l0) / l0;
        let mut k = 2.0 * (ea / l0 * b * b / (l * l) + n / l * z * z / (l * l));
        if legs == 4 {
            k += 2.0 * n / l;
        }
        k
    };
    let mut loads = Vec::new();
    let mut hi = h;
    for i in 1..10_000 {
        let lo = h * (1.0 - i as f64 / 10_000.0);
        if kx(lo).signum() != kx(hi).signum() {
            let (mut a, mut c) = (lo, hi);
            let s = kx(lo).signum();
            for _ in 0..200 {
                let mid = 0.5 * (a + c);
                if kx(mid).signum() == s { a = mid } else { c = mid }
            }
            loads.push(steep_load(legs, 0.5 * (a + c)));
        }
        hi = lo;
    }
    loads
}

/// Crown load at the snap-back turning point of the arch with a spring in
/// series (derived): the loaded end's deflection v = w + P(w)/k turns where
/// dv/dw = 1 − (dP/dz)/k = 0; with P = 2EA·(z/l − z/L),
/// dP/dz = 2EA·(b²/l³ − 1/L), so l³ = b²/(k/(2EA) + 1/L).
pub fn snap_back_turning_load() -> f64 {
    let a = ARCH;
    let k = 2.0e6;
    let l0 = (a.b * a.b + a.h * a.h).sqrt();
    let l = (a.b * a.b / (k / (2.0 * a.ea) + 1.0 / l0)).cbrt();
    let z = (l * l - a.b * a.b).sqrt();
    2.0 * a.ea * (z / l - z / l0)
}
