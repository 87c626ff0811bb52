//! Snapshots: the velocity components on a [`Grid`] with a validity mask, and their identifier.

use std::fmt;
use std::path::{Path, PathBuf};

use ndarray::{Array2, Array3};
use serde::{Deserialize, Serialize};

use crate::error::FieldError;
use crate::grid::Grid;

/// Stable identifier of one snapshot: the file it came from and its index in that file's stack
/// (0 for a file holding a single snapshot). Displayed as `path#index`.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
pub struct SnapshotId {
    /// The file (or, for a folder of per-component `.npy` files, the folder).
    pub source: PathBuf,
    /// Index along the stack's time axis.
    pub index: usize,
}

impl SnapshotId {
    /// A new identifier.
    pub fn new(source: impl Into<PathBuf>, index: usize) -> Self {
        Self {
            source: source.into(),
            index,
        }
    }

    /// The source path.
    pub fn path(&self) -> &Path {
        &self.source
    }
}

impl fmt::Display for SnapshotId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}#{}", self.source.display(), self.index)
    }
}

/// Velocity on a plane: in-plane components `u` (along x) and `v` (along y), optionally the
/// out-of-plane component `w`, all indexed `[iy, ix]`.
///
/// Invalid vectors (NaN in the input, or flagged by the acquisition software) have
/// `valid[[iy, ix]] == false` and NaN in every component, so that a computation that forgets the
/// mask produces NaN rather than a plausible wrong number.
#[derive(Debug, Clone)]
pub struct PlaneField {
    grid: Grid,
    u: Array2<f64>,
    v: Array2<f64>,
    w: Option<Array2<f64>>,
    valid: Array2<bool>,
}

/// A velocity component's element type.
trait Component: Copy {
    const NAN: Self;
    fn is_nan(self) -> bool;
    fn is_infinite(self) -> bool;
}

macro_rules! component {
    ($t:ty) => {
        impl Component for $t {
            const NAN: Self = <$t>::NAN;
            fn is_nan(self) -> bool {
                <$t>::is_nan(self)
            }
            fn is_infinite(self) -> bool {
                <$t>::is_infinite(self)
            }
        }
    };
}
component!(f64);
component!(f32);

fn standard_layout<A: Clone, D: ndarray::Dimension>(a: &mut ndarray::Array<A, D>) {
    if !a.is_standard_layout() {
        *a = a.as_standard_layout().into_owned();
    }
}

fn slice_of<A, D: ndarray::Dimension>(a: &mut ndarray::Array<A, D>) -> &mut [A] {
    a.as_slice_mut().expect("standard layout")
}

/// Marks `valid` false where any component is NaN or the vector is flagged, and sets every
/// component to NaN there, so that "invalid" has one representation downstream.
///
/// Errors: an infinite value (reported for the first component that has one, with its
/// count), or no valid vector. One fused, branch-free pass for the usual two or three
/// components (it vectorises): reading a slab of a large volume must not cost more than the
/// arithmetic done on it. On an error the components are left partly overwritten; both
/// callers own them and drop them.
fn mark_valid<T: Component>(
    names: &[&str],
    comps: &mut [&mut [T]],
    flagged: Option<&[bool]>,
    valid: &mut [bool],
) -> Result<(), FieldError> {
    let mut infinite = vec![0usize; comps.len()];
    let invalid = match (comps, flagged) {
        ([a, b], None) => fused::<T, false, false>(a, b, &mut [], &[], valid, &mut infinite),
        ([a, b], Some(f)) => fused::<T, false, true>(a, b, &mut [], f, valid, &mut infinite),
        ([a, b, c], None) => fused::<T, true, false>(a, b, c, &[], valid, &mut infinite),
        ([a, b, c], Some(f)) => fused::<T, true, true>(a, b, c, f, valid, &mut infinite),
        (comps, flagged) => {
            for (c, count) in comps.iter().zip(infinite.iter_mut()) {
                for (ok, &x) in valid.iter_mut().zip(c.iter()) {
                    *count += usize::from(x.is_infinite());
                    *ok &= !x.is_nan();
                }
            }
            if let Some(f) = flagged {
                for (ok, &bad) in valid.iter_mut().zip(f) {
                    *ok &= !bad;
                }
            }
            for c in comps.iter_mut() {
                for (x, &ok) in c.iter_mut().zip(valid.iter()) {
                    if !ok {
                        *x = T::NAN;
                    }
                }
            }
            valid.iter().map(|&ok| usize::from(!ok)).sum()
        }
    };
    if let Some((name, &count)) = names.iter().zip(&infinite).find(|(_, &n)| n > 0) {
        return Err(FieldError::NonFinite {
            component: name.to_string(),
            count,
        });
    }
    if invalid == valid.len() {
        return Err(FieldError::NoValidVectors);
    }
    Ok(())
}

/// The pass of [`mark_valid`] for two components, or three with `THREE` (`c` is then the
/// third; it is ignored, and may be empty, without): validity, NaN written by a select where
/// invalid, infinite values counted per component (`FLAGGED`: `flagged` holds the rejected
/// vectors); returns the number of invalid vectors. Written over named slices of equal length
/// so that the loop vectorises: indexing an array of slices point by point kept it scalar,
/// with a bounds check per component and point.
fn fused<T: Component, const THREE: bool, const FLAGGED: bool>(
    a: &mut [T],
    b: &mut [T],
    c: &mut [T],
    flagged: &[bool],
    valid: &mut [bool],
    infinite: &mut [usize],
) -> usize {
    let len = valid.len();
    let (a, b) = (&mut a[..len], &mut b[..len]);
    let c = if THREE { &mut c[..len] } else { c };
    let flagged = if FLAGGED { &flagged[..len] } else { flagged };
    let (mut inf_a, mut inf_b, mut inf_c, mut invalid) = (0usize, 0usize, 0usize, 0usize);
    for i in 0..len {
        let (x, y) = (a[i], b[i]);
        let z = if THREE { c[i] } else { x };
        inf_a += usize::from(x.is_infinite());
        inf_b += usize::from(y.is_infinite());
        inf_c += usize::from(THREE && z.is_infinite());
        let bad = x.is_nan() | y.is_nan() | (THREE && z.is_nan()) | (FLAGGED && flagged[i]);
        valid[i] = !bad;
        invalid += usize::from(bad);
        a[i] = if bad { T::NAN } else { x };
        b[i] = if bad { T::NAN } else { y };
        if THREE {
            c[i] = if bad { T::NAN } else { z };
        }
    }
    infinite[0] = inf_a;
    infinite[1] = inf_b;
    if THREE {
        infinite[2] = inf_c;
    }
    invalid
}

impl PlaneField {
    /// Builds a plane field, checking shapes against the grid and deriving the validity mask from
    /// NaN values and the optional `flagged` array (`true` = rejected vector).
    ///
    /// Errors: a grid that is not a plane, a component whose shape differs from the grid's, an
    /// infinite value (never a legitimate mask marker, so a sign of a corrupt file), or a field
    /// with no valid vector at all.
    pub fn new(
        grid: Grid,
        mut u: Array2<f64>,
        mut v: Array2<f64>,
        mut w: Option<Array2<f64>>,
        flagged: Option<&Array2<bool>>,
    ) -> Result<Self, FieldError> {
        if grid.ndim() != 2 {
            return Err(FieldError::WrongDimension {
                expected: 2,
                found: grid.ndim(),
            });
        }
        let shape = grid.shape();
        let check = |name: &str, s: &[usize]| -> Result<(), FieldError> {
            if s != shape.as_slice() {
                Err(FieldError::ShapeMismatch {
                    what: name.to_string(),
                    expected: shape.clone(),
                    found: s.to_vec(),
                })
            } else {
                Ok(())
            }
        };
        check("u", u.shape())?;
        check("v", v.shape())?;
        if let Some(w) = &w {
            check("w", w.shape())?;
        }
        if let Some(f) = flagged {
            check("mask", f.shape())?;
        }
        standard_layout(&mut u);
        standard_layout(&mut v);
        if let Some(w) = w.as_mut() {
            standard_layout(w);
        }
        let flagged = flagged.map(|f| f.as_standard_layout());
        let mut valid = Array2::from_elem(u.raw_dim(), true);
        {
            let mut names = vec!["u", "v"];
            let mut comps: Vec<&mut [f64]> = vec![slice_of(&mut u), slice_of(&mut v)];
            if let Some(w) = w.as_mut() {
                names.push("w");
                comps.push(slice_of(w));
            }
            mark_valid(
                &names,
                &mut comps,
                flagged.as_ref().and_then(|f| f.as_slice()),
                valid.as_slice_mut().expect("fresh array"),
            )?;
        }
        Ok(Self {
            grid,
            u,
            v,
            w,
            valid,
        })
    }

    /// The grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }
    /// x-component, `[iy, ix]`; NaN where invalid.
    pub fn u(&self) -> &Array2<f64> {
        &self.u
    }
    /// y-component, `[iy, ix]`; NaN where invalid.
    pub fn v(&self) -> &Array2<f64> {
        &self.v
    }
    /// Out-of-plane component, if the input had one (stereo PIV).
    pub fn w(&self) -> Option<&Array2<f64>> {
        self.w.as_ref()
    }
    /// `true` where the vector is valid.
    pub fn valid(&self) -> &Array2<bool> {
        &self.valid
    }
    /// Fraction of invalid vectors, 0..=1.
    pub fn invalid_fraction(&self) -> f64 {
        let bad = self.valid.iter().filter(|&&ok| !ok).count();
        bad as f64 / self.valid.len() as f64
    }
}

/// Velocity on a volume, indexed `[iz, iy, ix]`.
///
/// Stored in `f32`: DNS dumps are written in single precision, and a 512³ volume of three `f64`
/// components would take 3.2 GB before any work. Derivative code promotes to `f64` per point.
/// Invalid points follow the same convention as [`PlaneField`].
#[derive(Debug, Clone)]
pub struct VolumeField {
    grid: Grid,
    u: Array3<f32>,
    v: Array3<f32>,
    w: Array3<f32>,
    valid: Array3<bool>,
}

impl VolumeField {
    /// Builds a volume field; the same checks as [`PlaneField::new`].
    pub fn new(
        grid: Grid,
        mut u: Array3<f32>,
        mut v: Array3<f32>,
        mut w: Array3<f32>,
        flagged: Option<&Array3<bool>>,
    ) -> Result<Self, FieldError> {
        if grid.ndim() != 3 {
            return Err(FieldError::WrongDimension {
                expected: 3,
                found: grid.ndim(),
            });
        }
        let shape = grid.shape();
        for (name, s) in [("u", u.shape()), ("v", v.shape()), ("w", w.shape())]
            .into_iter()
            .chain(flagged.map(|f| ("mask", f.shape())))
        {
            if s != shape.as_slice() {
                return Err(FieldError::ShapeMismatch {
                    what: name.to_string(),
                    expected: shape.clone(),
                    found: s.to_vec(),
                });
            }
        }
        for a in [&mut u, &mut v, &mut w] {
            standard_layout(a);
        }
        let flagged = flagged.map(|f| f.as_standard_layout());
        let mut valid = Array3::from_elem(u.raw_dim(), true);
        mark_valid(
            &["u", "v", "w"],
            &mut [slice_of(&mut u), slice_of(&mut v), slice_of(&mut w)],
            flagged.as_ref().and_then(|f| f.as_slice()),
            valid.as_slice_mut().expect("fresh array"),
        )?;
        Ok(Self {
            grid,
            u,
            v,
            w,
            valid,
        })
    }

    /// The grid.
    pub fn grid(&self) -> &Grid {
        &self.grid
    }
    /// x-component, `[iz, iy, ix]`.
    pub fn u(&self) -> &Array3<f32> {
        &self.u
    }
    /// y-component.
    pub fn v(&self) -> &Array3<f32> {
        &self.v
    }
    /// z-component.
    pub fn w(&self) -> &Array3<f32> {
        &self.w
    }
    /// `true` where the vector is valid.
    pub fn valid(&self) -> &Array3<bool> {
        &self.valid
    }
    /// Fraction of invalid vectors, 0..=1.
    pub fn invalid_fraction(&self) -> f64 {
        let bad = self.valid.iter().filter(|&&ok| !ok).count();
        bad as f64 / self.valid.len() as f64
    }
}

/// A plane or a volume.
#[derive(Debug, Clone)]
pub enum Field {
    /// A 2D field (planar or stereo PIV, a DNS plane).
    Plane(PlaneField),
    /// A 3D field (tomographic PIV, a DNS dump).
    Volume(VolumeField),
}

impl Field {
    /// The grid of either kind.
    pub fn grid(&self) -> &Grid {
        match self {
            Field::Plane(p) => p.grid(),
            Field::Volume(v) => v.grid(),
        }
    }

    /// Fraction of invalid vectors.
    pub fn invalid_fraction(&self) -> f64 {
        match self {
            Field::Plane(p) => p.invalid_fraction(),
            Field::Volume(v) => v.invalid_fraction(),
        }
    }

    /// Smallest and largest speed |u| over valid vectors.
    pub fn speed_range(&self) -> (f64, f64) {
        let mut lo = f64::INFINITY;
        let mut hi = 0.0_f64;
        let mut visit = |s: f64| {
            lo = lo.min(s);
            hi = hi.max(s);
        };
        match self {
            Field::Plane(p) => {
                for (idx, &ok) in p.valid.indexed_iter() {
                    if ok {
                        let c = p.w.as_ref().map_or(0.0, |w| w[idx]);
                        let (a, b) = (p.u[idx], p.v[idx]);
                        visit((a * a + b * b + c * c).sqrt());
                    }
                }
            }
            Field::Volume(v) => {
                for (((&a, &b), &c), &ok) in
                    v.u.iter()
                        .zip(v.v.iter())
                        .zip(v.w.iter())
                        .zip(v.valid.iter())
                {
                    if ok {
                        let (a, b, c) = (a as f64, b as f64, c as f64);
                        visit((a * a + b * b + c * c).sqrt());
                    }
                }
            }
        }
        (lo, hi)
    }
}

/// One snapshot: where it came from and its field.
#[derive(Debug, Clone)]
pub struct Snapshot {
    /// Stable identifier.
    pub id: SnapshotId,
    /// Time of the snapshot in the source's time unit, when the source records one.
    pub time: Option<f64>,
    /// The velocity field.
    pub field: Field,
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::{Axis, Units};
    use ndarray::array;

    fn grid(nx: usize, ny: usize) -> Grid {
        Grid::plane(
            Axis::new("x", nx, 0.0, 1.0).unwrap(),
            Axis::new("y", ny, 0.0, 1.0).unwrap(),
            Units::default(),
        )
    }

    #[test]
    fn nan_and_flags_make_invalid_vectors() {
        let u = array![[1.0, f64::NAN, 1.0], [1.0, 1.0, 1.0]];
        let v = array![[0.0, 0.0, 0.0], [0.0, 0.0, 0.0]];
        let flagged = array![[false, false, false], [false, false, true]];
        let f = PlaneField::new(grid(3, 2), u, v.clone(), None, Some(&flagged)).unwrap();
        assert_eq!(f.valid(), &array![[true, false, true], [true, true, false]]);
        // Flagged vectors are blanked in every component.
        assert!(f.v()[[1, 2]].is_nan());
        assert!((f.invalid_fraction() - 2.0 / 6.0).abs() < 1e-15);
    }

    #[test]
    fn shape_mismatch_names_the_component() {
        let u = Array2::<f64>::zeros((2, 3));
        let v = Array2::<f64>::zeros((3, 2));
        let err = PlaneField::new(grid(3, 2), u, v, None, None).unwrap_err();
        assert!(err.to_string().contains('v'), "{err}");
    }

    #[test]
    fn all_nan_and_infinite_fields_are_errors() {
        let u = Array2::from_elem((2, 2), f64::NAN);
        let v = Array2::<f64>::zeros((2, 2));
        assert!(matches!(
            PlaneField::new(grid(2, 2), u, v.clone(), None, None),
            Err(FieldError::NoValidVectors)
        ));
        let mut u = Array2::<f64>::zeros((2, 2));
        u[[0, 1]] = f64::INFINITY;
        assert!(matches!(
            PlaneField::new(grid(2, 2), u, v, None, None),
            Err(FieldError::NonFinite { .. })
        ));
    }

    #[test]
    fn invalid_vectors_are_nan_in_every_component_and_errors_name_the_component() {
        // Three components with flags (the volume pass), then an infinite value hidden behind
        // a NaN of another component: it must still be counted and named.
        let nan = f64::NAN;
        let mut comps = [
            vec![1.0, nan, 3.0, 4.0, 5.0],
            vec![1.0, 2.0, 3.0, nan, 5.0],
            vec![1.0, 2.0, 3.0, 4.0, 5.0],
        ];
        let flagged = [false, false, true, false, false];
        let mut valid = vec![true; 5];
        {
            let [a, b, c] = &mut comps;
            mark_valid(
                &["u", "v", "w"],
                &mut [a.as_mut_slice(), b.as_mut_slice(), c.as_mut_slice()],
                Some(&flagged),
                &mut valid,
            )
            .unwrap();
        }
        assert_eq!(valid, [true, false, false, false, true]);
        for c in &comps {
            for (x, ok) in c.iter().zip(&valid) {
                assert_eq!(x.is_nan(), !ok);
            }
        }
        let mut u = vec![nan, 1.0, 1.0];
        let mut v = vec![f64::INFINITY, f64::NEG_INFINITY, 0.0];
        let err = mark_valid(&["u", "v"], &mut [&mut u, &mut v], None, &mut [true; 3]);
        assert!(
            matches!(&err, Err(FieldError::NonFinite { component, count: 2 }) if component == "v"),
            "{err:?}"
        );
    }

    /// Longer fields than the small cases above (vector widths and loop tails of the fused
    /// pass): it gives exactly what the point rule gives (valid = no NaN in any component and
    /// not flagged; NaN written where invalid; infinite values counted per component).
    #[test]
    fn the_fused_pass_equals_the_point_rule_on_longer_fields() {
        for (len, n_comps, with_flags) in [
            (200, 2, false),
            (200, 2, true),
            (129, 3, true),
            (64, 3, false),
        ] {
            let value = |k: usize, i: usize| match (i * 7 + k * 13) % 23 {
                0 => f64::NAN,
                5 if k == 1 => f64::INFINITY,
                _ => (i + k) as f64,
            };
            let mut comps: Vec<Vec<f64>> = (0..n_comps)
                .map(|k| (0..len).map(|i| value(k, i)).collect())
                .collect();
            let flagged: Vec<bool> = (0..len).map(|i| i % 17 == 3).collect();
            let expected_valid: Vec<bool> = (0..len)
                .map(|i| (0..n_comps).all(|k| !value(k, i).is_nan()) && !(with_flags && flagged[i]))
                .collect();
            let infinite = (0..len).filter(|&i| value(1, i).is_infinite()).count();
            let mut valid = vec![true; len];
            let names = ["u", "v", "w"];
            let mut slices: Vec<&mut [f64]> = comps.iter_mut().map(|c| c.as_mut_slice()).collect();
            let result = mark_valid(
                &names[..n_comps],
                &mut slices,
                with_flags.then_some(flagged.as_slice()),
                &mut valid,
            );
            assert!(
                matches!(&result, Err(FieldError::NonFinite { component, count }) if component == "v" && *count == infinite),
                "{result:?}"
            );
            assert_eq!(valid, expected_valid, "len {len}, {n_comps} components");
            for (k, c) in comps.iter().enumerate() {
                for (i, x) in c.iter().enumerate() {
                    if expected_valid[i] {
                        assert_eq!(x.to_bits(), value(k, i).to_bits());
                    } else {
                        assert!(x.is_nan());
                    }
                }
            }
        }
    }

    #[test]
    fn snapshot_id_display() {
        assert_eq!(SnapshotId::new("run/a.h5", 7).to_string(), "run/a.h5#7");
    }
}
