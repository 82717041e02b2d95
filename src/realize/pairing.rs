//! Grouping poles and zeros into second-order sections, and ordering the sections.
//!
//! Each section holds at most two poles and two zeros, always whole conjugate pairs, so its
//! coefficients are real. Poles are taken worst first (closest to the unit circle) and each takes
//! the zeros nearest to it: a pole sitting beside a zero makes a section with little gain of its
//! own, which keeps the signal between sections near its final level. Leftover zeros fill free
//! numerator places, then sections of their own; a pure delay z⁻ᵈ fills what numerator places
//! remain. Finally the sections are ordered so the poles closest to the circle come last, where
//! their high gain and long ringing act on a signal the earlier sections have already shaped.

use num_complex::Complex64;

/// A real factor of a polynomial: a complex-conjugate pair (given by its member above the real
/// axis) or one real root.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum RootGroup {
    Pair(Complex64),
    Real(f64),
}

impl RootGroup {
    fn degree(self) -> usize {
        match self {
            RootGroup::Pair(_) => 2,
            RootGroup::Real(_) => 1,
        }
    }

    /// Distance from `p` to the nearer member of the group.
    fn distance_to(self, p: Complex64) -> f64 {
        match self {
            RootGroup::Pair(z) => (z - p).norm().min((z.conj() - p).norm()),
            RootGroup::Real(r) => (Complex64::new(r, 0.0) - p).norm(),
        }
    }

    fn radius(self) -> f64 {
        match self {
            RootGroup::Pair(z) => z.norm(),
            RootGroup::Real(r) => r.abs(),
        }
    }

    /// How near the unit circle: | 1 − |root| |, smaller is nearer.
    fn closeness(self) -> f64 {
        (1.0 - self.radius()).abs()
    }

    fn value(self) -> Complex64 {
        match self {
            RootGroup::Pair(z) => z,
            RootGroup::Real(r) => Complex64::new(r, 0.0),
        }
    }

    /// The factor as coefficients in z⁻¹: 1 − 2Re(z)z⁻¹ + |z|²z⁻², or 1 − r z⁻¹.
    fn factor(self) -> Vec<f64> {
        match self {
            RootGroup::Pair(z) => vec![1.0, -2.0 * z.re, z.norm_sqr()],
            RootGroup::Real(r) => vec![1.0, -r],
        }
    }
}

/// The roots one second-order section is to hold, and any pure delay in its numerator.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct SectionRoots {
    pub zeros: Vec<RootGroup>,
    pub poles: Vec<RootGroup>,
    pub delay: usize,
}

impl SectionRoots {
    fn numerator_degree(&self) -> usize {
        self.zeros.iter().map(|g| g.degree()).sum::<usize>() + self.delay
    }

    /// Numerator b₀ + b₁z⁻¹ + b₂z⁻² (leading factor 1 before the delay shifts it).
    pub fn numerator(&self) -> [f64; 3] {
        let mut shifted = vec![0.0; self.delay];
        shifted.extend(product(&self.zeros));
        to_three(&shifted)
    }

    /// Denominator 1 + a₁z⁻¹ + a₂z⁻².
    pub fn denominator(&self) -> [f64; 3] {
        to_three(&product(&self.poles))
    }

    /// Nearness of this section's poles to the circle (smaller is nearer); pole-free sections
    /// count as farthest.
    fn closeness(&self) -> f64 {
        self.poles
            .iter()
            .map(|g| g.closeness())
            .fold(f64::INFINITY, f64::min)
    }
}

fn product(groups: &[RootGroup]) -> Vec<f64> {
    groups.iter().fold(vec![1.0], |acc, g| {
        crate::numeric::poly::multiply(&acc, &g.factor())
    })
}

fn to_three(c: &[f64]) -> [f64; 3] {
    let mut out = [0.0; 3];
    for (o, &x) in out.iter_mut().zip(c) {
        *o = x;
    }
    out
}

/// Roots split into conjugate pairs and real roots; fails (with the counts above and below the
/// axis) when the complex roots do not pair up.
pub(crate) fn conjugate_groups(roots: &[Complex64]) -> Result<Vec<RootGroup>, (usize, usize)> {
    let upper: Vec<Complex64> = roots.iter().copied().filter(|z| z.im > 0.0).collect();
    let lower = roots.iter().filter(|z| z.im < 0.0).count();
    if upper.len() != lower {
        return Err((upper.len(), lower));
    }
    let mut groups: Vec<RootGroup> = upper.into_iter().map(RootGroup::Pair).collect();
    groups.extend(
        roots
            .iter()
            .filter(|z| z.im == 0.0)
            .map(|z| RootGroup::Real(z.re)),
    );
    Ok(groups)
}

/// Groups `poles` and `zeros` (as from [`conjugate_groups`], no roots at the origin) and a pure
/// delay of `delay` samples into sections, ordered for running (nearest-the-circle poles last).
pub(crate) fn pair_into_sections(
    poles: &[RootGroup],
    zeros: &[RootGroup],
    delay: usize,
) -> Vec<SectionRoots> {
    let mut sections: Vec<SectionRoots> = pole_units(poles)
        .into_iter()
        .map(|poles| SectionRoots {
            zeros: Vec::new(),
            poles,
            delay: 0,
        })
        .collect();
    // Worst poles choose their zeros first.
    sections.sort_by(|x, y| x.closeness().total_cmp(&y.closeness()));

    let mut pool: Vec<RootGroup> = zeros.to_vec();
    for section in sections.iter_mut() {
        let p1 = section.poles[0].value();
        let Some(first) = take_nearest(&mut pool, p1, |_| true) else {
            break;
        };
        section.zeros.push(first);
        if let RootGroup::Real(_) = first {
            // The second real zero goes with the unit's other pole, if it has one.
            let p2 = match section.poles.as_slice() {
                [_, RootGroup::Real(r)] => Complex64::new(*r, 0.0),
                _ => p1,
            };
            if let Some(second) = take_nearest(&mut pool, p2, |g| matches!(g, RootGroup::Real(_))) {
                section.zeros.push(second);
            }
        }
    }

    place_leftover_zeros(&mut sections, pool);
    place_delay(&mut sections, delay);

    // Pole-free sections first, then poles farthest from the circle, nearest last.
    sections.sort_by(|x, y| y.closeness().total_cmp(&x.closeness()));
    sections
}

/// Poles in units of degree ≤ 2: each conjugate pair alone; real poles two by two, nearest the
/// circle together (so the one leftover real pole, if any, is the one farthest from it).
fn pole_units(poles: &[RootGroup]) -> Vec<Vec<RootGroup>> {
    let mut units: Vec<Vec<RootGroup>> = poles
        .iter()
        .filter(|g| matches!(g, RootGroup::Pair(_)))
        .map(|&g| vec![g])
        .collect();
    let mut reals: Vec<RootGroup> = poles
        .iter()
        .copied()
        .filter(|g| matches!(g, RootGroup::Real(_)))
        .collect();
    reals.sort_by(|x, y| x.closeness().total_cmp(&y.closeness()));
    units.extend(reals.chunks(2).map(|c| c.to_vec()));
    units
}

fn take_nearest(
    pool: &mut Vec<RootGroup>,
    p: Complex64,
    allowed: impl Fn(&RootGroup) -> bool,
) -> Option<RootGroup> {
    let index = pool
        .iter()
        .enumerate()
        .filter(|(_, g)| allowed(g))
        .min_by(|(_, x), (_, y)| x.distance_to(p).total_cmp(&y.distance_to(p)))
        .map(|(i, _)| i)?;
    Some(pool.swap_remove(index))
}

/// Zeros no pole took: pairs into empty numerators, reals into half-full then empty ones, and
/// whatever still remains into pole-free sections of its own.
fn place_leftover_zeros(sections: &mut Vec<SectionRoots>, pool: Vec<RootGroup>) {
    let (pairs, reals): (Vec<RootGroup>, Vec<RootGroup>) = pool
        .into_iter()
        .partition(|g| matches!(g, RootGroup::Pair(_)));
    let mut homeless = Vec::new();
    for pair in pairs {
        match sections.iter_mut().find(|s| s.numerator_degree() == 0) {
            Some(s) => s.zeros.push(pair),
            None => homeless.push(pair),
        }
    }
    let mut homeless_reals = Vec::new();
    for real in reals {
        let target = sections
            .iter()
            .position(|s| s.numerator_degree() == 1)
            .or_else(|| sections.iter().position(|s| s.numerator_degree() == 0));
        match target {
            Some(i) => sections[i].zeros.push(real),
            None => homeless_reals.push(real),
        }
    }
    let zero_only = |zeros: Vec<RootGroup>| SectionRoots {
        zeros,
        poles: Vec::new(),
        delay: 0,
    };
    sections.extend(homeless.into_iter().map(|g| zero_only(vec![g])));
    sections.extend(homeless_reals.chunks(2).map(|c| zero_only(c.to_vec())));
}

/// Spreads a pure delay of `delay` samples over free numerator places, then delay-only sections.
fn place_delay(sections: &mut Vec<SectionRoots>, mut delay: usize) {
    for s in sections.iter_mut() {
        let free = 2usize.saturating_sub(s.numerator_degree());
        let used = free.min(delay);
        s.delay += used;
        delay -= used;
    }
    while delay > 0 {
        let used = delay.min(2);
        sections.push(SectionRoots {
            zeros: Vec::new(),
            poles: Vec::new(),
            delay: used,
        });
        delay -= used;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    // Source: common practice — complex roots of a real polynomial come in conjugate pairs.
    #[test]
    fn conjugate_groups_need_both_halves() {
        let ok = conjugate_groups(&[c(0.1, 0.5), c(0.1, -0.5), c(0.3, 0.0)]).unwrap();
        assert_eq!(ok, vec![RootGroup::Pair(c(0.1, 0.5)), RootGroup::Real(0.3)]);
        assert_eq!(conjugate_groups(&[c(0.1, 0.5)]), Err((1, 0)));
    }

    // Source: common practice (nearest pairing, poles nearest the circle last).
    #[test]
    fn each_pole_pair_takes_its_nearest_zeros_and_worst_poles_run_last() {
        let poles = [
            RootGroup::Pair(Complex64::from_polar(0.95, 0.3)),
            RootGroup::Pair(Complex64::from_polar(0.5, 2.0)),
        ];
        let zeros = [
            RootGroup::Pair(Complex64::from_polar(0.9, 2.1)),
            RootGroup::Pair(Complex64::from_polar(0.9, 0.35)),
        ];
        let s = pair_into_sections(&poles, &zeros, 0);
        assert_eq!(s.len(), 2);
        assert_eq!(s[0].poles, vec![poles[1]]);
        assert_eq!(s[0].zeros, vec![zeros[0]]);
        assert_eq!(s[1].poles, vec![poles[0]]);
        assert_eq!(s[1].zeros, vec![zeros[1]]);
    }

    // Source: common practice — every section has at most two zeros and two poles, and the
    // degrees add up to the polynomial orders.
    #[test]
    fn odd_orders_leftovers_and_delay_fit_in_sections() {
        let poles = [
            RootGroup::Real(0.9),
            RootGroup::Real(-0.2),
            RootGroup::Real(0.5),
        ];
        let zeros = [
            RootGroup::Real(0.1),
            RootGroup::Pair(c(0.3, 0.4)),
            RootGroup::Pair(c(-0.3, 0.4)),
            RootGroup::Pair(c(0.0, 0.7)),
        ];
        let s = pair_into_sections(&poles, &zeros, 3);
        let zero_degree: usize = s.iter().map(|x| x.numerator_degree()).sum();
        let pole_degree: usize = s
            .iter()
            .map(|x| x.poles.iter().map(|g| g.degree()).sum::<usize>())
            .sum();
        assert_eq!(zero_degree, 7 + 3);
        assert_eq!(pole_degree, 3);
        for x in &s {
            assert!(x.numerator_degree() <= 2 && x.poles.len() <= 2, "{x:?}");
        }
        // Sections needed: at least ⌈10/2⌉ for the numerator.
        assert_eq!(s.len(), 5);
        // The section holding the pole at 0.9 runs last.
        assert!(s.last().unwrap().poles.contains(&RootGroup::Real(0.9)));
    }
}
