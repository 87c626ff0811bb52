//! The reader shared by the array formats: chooses the component arrays, works out the stack
//! and spatial axes, builds the grid once, then assembles one snapshot per call.

use std::path::{Path, PathBuf};

use ndarray::{ArrayD, Axis as NdAxis, Ix2, Ix3};

use super::{find, ArrayInfo, ArrayStore, GridOrigin, RoleAssignment, SnapshotReader, SourceInfo};
use crate::error::FieldError;
use crate::grid::{Axis, Grid};
use crate::snapshot::{Field, PlaneField, Snapshot, SnapshotId, VolumeField};
use crate::spec::{Geometry, InputSpec};

/// How the velocity components are stored.
#[derive(Debug, Clone)]
enum Components {
    /// One array per component.
    Separate {
        u: String,
        v: String,
        w: Option<String>,
    },
    /// One array with a component axis (logical, counted in the snapshot's own axes).
    Stacked {
        array: String,
        axis: usize,
        count: usize,
    },
}

/// A [`SnapshotReader`] over any [`ArrayStore`].
pub struct ArrayReader<S: ArrayStore> {
    store: S,
    path: PathBuf,
    spec_geometry: Geometry,
    components: Components,
    mask: Option<String>,
    /// Logical axis of the stack within each component array, if the arrays are stacked.
    time_axis: Option<usize>,
    times: Option<Vec<f64>>,
    info: SourceInfo,
}

impl<S: ArrayStore> ArrayReader<S> {
    /// Works out components, stack and grid from the store and the description.
    pub fn new(path: &Path, mut store: S, spec: &InputSpec) -> Result<Self, FieldError> {
        let arrays = store.arrays().to_vec();
        if arrays.is_empty() {
            return Err(FieldError::Corrupt("the file holds no arrays".into()));
        }
        let spatial_rank = match spec.geometry {
            Geometry::Plane => 2,
            Geometry::Volume => 3,
        };
        let has = |name: &str| find(&arrays, name).is_ok();
        let mut roles = Vec::new();
        let components = if has(&spec.u) || has(&spec.v) || !store.is_single_array() {
            let u = find(&arrays, &spec.u)?.name.clone();
            let v = find(&arrays, &spec.v)?.name.clone();
            let w = find(&arrays, &spec.w).ok().map(|a| a.name.clone());
            roles.push(role("u", &u));
            roles.push(role("v", &v));
            if let Some(w) = &w {
                roles.push(role("w", w));
            }
            Components::Separate { u, v, w }
        } else {
            let a = &arrays[0];
            let snapshot_rank = spatial_rank + 1;
            let rank = a.shape.len();
            if rank != snapshot_rank && rank != snapshot_rank + 1 {
                return Err(FieldError::BadLayout {
                    name: a.name.clone(),
                    shape: a.shape.clone(),
                    reason: format!(
                        "a single array holding all components needs {snapshot_rank} axes \
                         (component + {spatial_rank} spatial) or {} with a time axis",
                        snapshot_rank + 1
                    ),
                });
            }
            let stacked = rank == snapshot_rank + 1;
            let comp_len = component_axis_len(a, spec, stacked)?;
            if !(2..=3).contains(&comp_len) {
                return Err(FieldError::BadLayout {
                    name: a.name.clone(),
                    shape: a.shape.clone(),
                    reason: format!(
                        "component axis {} has length {comp_len}; expected 2 (u, v) or 3 (u, v, w)",
                        spec.component_axis
                    ),
                });
            }
            for (k, r) in ["u", "v", "w"].iter().take(comp_len).enumerate() {
                roles.push(role(
                    r,
                    &format!("{}[axis {} = {k}]", a.name, spec.component_axis),
                ));
            }
            Components::Stacked {
                array: a.name.clone(),
                axis: spec.component_axis,
                count: comp_len,
            }
        };

        // Shapes: every component the same, then split into stack and space.
        let (component_shape, snapshot_rank) = match &components {
            Components::Separate { u, v, w } => {
                let su = find(&arrays, u)?.shape.clone();
                for name in std::iter::once(v).chain(w.iter()) {
                    let s = &find(&arrays, name)?.shape;
                    if *s != su {
                        return Err(FieldError::ShapeMismatch {
                            what: name.clone(),
                            expected: su.clone(),
                            found: s.clone(),
                        });
                    }
                }
                (su, spatial_rank)
            }
            Components::Stacked { array, .. } => {
                (find(&arrays, array)?.shape.clone(), spatial_rank + 1)
            }
        };
        let (time_axis, n_snapshots) = if component_shape.len() == snapshot_rank {
            (None, 1)
        } else if component_shape.len() == snapshot_rank + 1 {
            let axis = if spec.time_first() {
                0
            } else {
                component_shape.len() - 1
            };
            (Some(axis), component_shape[axis])
        } else {
            let name = match &components {
                Components::Separate { u, .. } => u.clone(),
                Components::Stacked { array, .. } => array.clone(),
            };
            return Err(FieldError::BadLayout {
                name,
                shape: component_shape.clone(),
                reason: format!(
                    "expected {snapshot_rank} axes per snapshot ({} geometry), or one more for a \
                     time stack; set input.geometry or check the array",
                    if spatial_rank == 2 { "plane" } else { "volume" }
                ),
            });
        };
        if n_snapshots == 0 {
            return Err(FieldError::BadLayout {
                name: "stack".into(),
                shape: component_shape,
                reason: "the time axis has length 0".into(),
            });
        }
        let mut per_snapshot = component_shape.clone();
        if let Some(t) = time_axis {
            per_snapshot.remove(t);
        }
        let spatial_shape: Vec<usize> = match &components {
            Components::Separate { .. } => per_snapshot.clone(),
            Components::Stacked { axis, .. } => {
                let mut s = per_snapshot.clone();
                s.remove(*axis);
                s
            }
        };
        if spatial_shape.contains(&0) {
            return Err(FieldError::BadLayout {
                name: "velocity".into(),
                shape: spatial_shape,
                reason: "an axis has length 0".into(),
            });
        }

        let mask = match find(&arrays, &spec.mask) {
            Ok(m) if m.shape == component_shape => {
                roles.push(role("mask", &m.name));
                Some(m.name.clone())
            }
            Ok(m) => {
                return Err(FieldError::ShapeMismatch {
                    what: m.name.clone(),
                    expected: component_shape,
                    found: m.shape.clone(),
                })
            }
            Err(_) => None,
        };

        // Snapshot times: a vector along the stack, or a scalar for a single snapshot.
        let times = match find(&arrays, &spec.time) {
            Ok(t)
                if (t.shape == [n_snapshots] && time_axis.is_some())
                    || (t.shape.iter().product::<usize>() == 1 && n_snapshots == 1) =>
            {
                let values = store.read_all(&t.name)?;
                roles.push(role("t", &t.name));
                Some(values.iter().copied().collect())
            }
            _ => None,
        };

        let velocity_name = match &components {
            Components::Separate { u, .. } => u.clone(),
            Components::Stacked { array, .. } => array.clone(),
        };
        let (grid, grid_origin) = build_grid(
            &mut store,
            &arrays,
            spec,
            &spatial_shape,
            &velocity_name,
            &mut roles,
        )?;
        let info = SourceInfo {
            path: path.to_path_buf(),
            format: store.format().to_string(),
            arrays,
            roles,
            grid,
            grid_origin,
            snapshots: n_snapshots,
        };
        Ok(Self {
            store,
            path: path.to_path_buf(),
            spec_geometry: spec.geometry,
            components,
            mask,
            time_axis,
            times,
            info,
        })
    }

    fn read_component(&mut self, name: &str, index: usize) -> Result<ArrayD<f64>, FieldError> {
        match self.time_axis {
            Some(axis) => self.store.read_along(name, axis, index),
            None => self.store.read_all(name),
        }
    }
}

fn role(role: &str, source: &str) -> RoleAssignment {
    RoleAssignment {
        role: role.to_string(),
        source: source.to_string(),
    }
}

fn component_axis_len(a: &ArrayInfo, spec: &InputSpec, stacked: bool) -> Result<usize, FieldError> {
    let mut per_snapshot = a.shape.clone();
    if stacked {
        let t = if spec.time_first() {
            0
        } else {
            per_snapshot.len() - 1
        };
        per_snapshot.remove(t);
    }
    per_snapshot
        .get(spec.component_axis)
        .copied()
        .ok_or_else(|| FieldError::BadLayout {
            name: a.name.clone(),
            shape: a.shape.clone(),
            reason: format!("no component axis {}", spec.component_axis),
        })
}

/// Builds the grid: the description's spacing wins, then coordinate arrays, then spacing
/// attributes, else unit spacing.
fn build_grid<S: ArrayStore>(
    store: &mut S,
    arrays: &[ArrayInfo],
    spec: &InputSpec,
    spatial_shape: &[usize],
    velocity_name: &str,
    roles: &mut Vec<RoleAssignment>,
) -> Result<(Grid, GridOrigin), FieldError> {
    let rank = spatial_shape.len();
    // Array axis of each spatial axis: x is last, y second last, z first (volumes).
    let axis_names = [spec.x.as_str(), spec.y.as_str(), spec.z.as_str()];
    let labels = ["x", "y", "z"];
    let lens: Vec<usize> = (0..rank).map(|k| spatial_shape[rank - 1 - k]).collect();

    let velocity_unit = store.attr_string(Some(velocity_name), "units");
    let mut length_unit = None;
    let mut axes = Vec::with_capacity(rank);
    let origin: GridOrigin;

    if spec.spacing.is_some() {
        for (k, &len) in lens.iter().enumerate() {
            let mut d = spec.spacing_for(k).expect("spacing present");
            if k == 1 && spec.flip_y {
                d = -d;
            }
            axes.push(Axis::new(labels[k], len, spec.origin_for(k), d)?);
        }
        origin = GridOrigin::Description;
    } else if (0..rank).all(|k| find(arrays, axis_names[k]).is_ok()) {
        for (k, &len) in lens.iter().enumerate() {
            let info = find(arrays, axis_names[k])?.clone();
            let values = store.read_all(&info.name)?;
            let coords = coordinate_vector(&info, &values, k, len, spatial_shape)?;
            axes.push(Axis::from_coordinates(
                labels[k],
                &coords,
                spec.uniform_tolerance,
            )?);
            roles.push(role(labels[k], &info.name));
            if length_unit.is_none() {
                length_unit = store.attr_string(Some(&info.name), "units");
            }
        }
        origin = GridOrigin::Coordinates;
    } else if let Some(dx) = spacing_attr(store, velocity_name, "x") {
        for (k, &len) in lens.iter().enumerate() {
            let d = if k == 0 {
                dx
            } else {
                spacing_attr(store, velocity_name, labels[k]).unwrap_or(dx)
            };
            let o = origin_attr(store, velocity_name, labels[k]).unwrap_or(0.0);
            axes.push(Axis::new(labels[k], len, o, d)?);
        }
        length_unit = store
            .attr_string(Some(velocity_name), "length_units")
            .or_else(|| store.attr_string(None, "length_units"));
        origin = GridOrigin::Attributes;
    } else {
        for (k, &len) in lens.iter().enumerate() {
            axes.push(Axis::new(labels[k], len, 0.0, 1.0)?);
        }
        length_unit = Some("grid".to_string());
        origin = GridOrigin::UnitSpacing;
    }
    let units = spec.units(length_unit, velocity_unit);
    let grid = if rank == 2 {
        Grid::plane(axes[0], axes[1], units)
    } else {
        Grid::volume(axes[0], axes[1], axes[2], units)
    };
    Ok((grid, origin))
}

/// A 1D coordinate array, or the matching line of a meshgrid-style array of the field's shape.
fn coordinate_vector(
    info: &ArrayInfo,
    values: &ArrayD<f64>,
    spatial_axis: usize,
    len: usize,
    spatial_shape: &[usize],
) -> Result<Vec<f64>, FieldError> {
    let rank = spatial_shape.len();
    // A vector stored as a 1 × n or n × 1 matrix (MATLAB has no 1D arrays) counts as 1D.
    let singleton_dims = values.shape().iter().filter(|&&n| n != 1).count() <= 1;
    if values.ndim() == 1 || (singleton_dims && values.len() == len) {
        if values.len() != len {
            return Err(FieldError::ShapeMismatch {
                what: format!("coordinate {}", info.name),
                expected: vec![len],
                found: info.shape.clone(),
            });
        }
        return Ok(values.iter().copied().collect());
    }
    if values.shape() == spatial_shape {
        // Meshgrid: take the line along this coordinate's array axis through index 0, and check
        // that the coordinate really only varies along it.
        let array_axis = rank - 1 - spatial_axis;
        let mut line = values.view();
        for ax in (0..rank).rev() {
            if ax != array_axis {
                line = line.index_axis_move(NdAxis(ax), 0);
            }
        }
        let coords: Vec<f64> = line.iter().copied().collect();
        for (idx, &c) in values.indexed_iter() {
            let expected = coords[idx[array_axis]];
            if (c - expected).abs() > 1e-9 * (1.0 + expected.abs()) && c.is_finite() {
                return Err(FieldError::BadCoordinates {
                    axis: info.name.clone(),
                    reason: "2D coordinate array is not a tensor-product (meshgrid) grid; \
                             rotated or curvilinear grids are not supported"
                        .into(),
                });
            }
        }
        return Ok(coords);
    }
    Err(FieldError::ShapeMismatch {
        what: format!("coordinate {}", info.name),
        expected: vec![len],
        found: info.shape.clone(),
    })
}

fn spacing_attr<S: ArrayStore>(store: &S, array: &str, axis: &str) -> Option<f64> {
    let key = format!("d{axis}");
    store
        .attr_f64(Some(array), &key)
        .or_else(|| store.attr_f64(None, &key))
        .filter(|d| d.is_finite() && *d != 0.0)
}

fn origin_attr<S: ArrayStore>(store: &S, array: &str, axis: &str) -> Option<f64> {
    let key = format!("{axis}0");
    store
        .attr_f64(Some(array), &key)
        .or_else(|| store.attr_f64(None, &key))
}

impl<S: ArrayStore> SnapshotReader for ArrayReader<S> {
    fn info(&self) -> &SourceInfo {
        &self.info
    }

    fn read(&mut self, index: usize) -> Result<Snapshot, FieldError> {
        let path = self.path.clone();
        self.read_inner(index).map_err(|e| e.in_file(path))
    }

    fn read_volume_planes(
        &mut self,
        index: usize,
        z: std::ops::Range<usize>,
    ) -> Result<super::VolumePlanes, FieldError> {
        let path = self.path.clone();
        self.read_planes_inner(index, z)
            .map_err(|e| e.in_file(path))
    }
}

impl<S: ArrayStore> ArrayReader<S> {
    /// Reads z-planes of one volume snapshot, block by block from the store (separate
    /// component arrays); stacked-component arrays are read whole and cut.
    fn read_planes_inner(
        &mut self,
        index: usize,
        z: std::ops::Range<usize>,
    ) -> Result<super::VolumePlanes, FieldError> {
        if self.spec_geometry != Geometry::Volume {
            return Err(FieldError::WrongDimension {
                expected: 3,
                found: 2,
            });
        }
        if index >= self.info.snapshots {
            return Err(FieldError::IndexOutOfRange {
                index,
                len: self.info.snapshots,
            });
        }
        let shape = self.info.grid.shape();
        let nz = shape[0];
        if z.start >= z.end || z.end > nz {
            return Err(FieldError::IndexOutOfRange {
                index: z.end.saturating_sub(1),
                len: nz,
            });
        }
        let (u, v, w) = match self.components.clone() {
            Components::Separate { u, v, w: Some(w) } => (u, v, w),
            Components::Separate { w: None, .. } => {
                return Err(FieldError::Missing {
                    kind: "array",
                    name: "w (a volume needs three components)".into(),
                    available: self.info.arrays.iter().map(|a| a.name.clone()).collect(),
                })
            }
            Components::Stacked { .. } => {
                // One array holding all components: read the snapshot and cut (not streamed).
                let snapshot = self.read_inner(index)?;
                let Field::Volume(f) = snapshot.field else {
                    return Err(FieldError::WrongDimension {
                        expected: 3,
                        found: 2,
                    });
                };
                let cut =
                    |a: &ndarray::Array3<f32>| a.slice(ndarray::s![z.clone(), .., ..]).to_owned();
                return Ok(super::VolumePlanes {
                    z: z.clone(),
                    u: cut(f.u()),
                    v: cut(f.v()),
                    w: cut(f.w()),
                    flagged: Some(
                        f.valid()
                            .slice(ndarray::s![z.clone(), .., ..])
                            .mapv(|ok| !ok),
                    ),
                });
            }
        };
        let mut start = vec![z.start, 0, 0];
        let mut count = vec![z.end - z.start, shape[1], shape[2]];
        if let Some(t) = self.time_axis {
            start.insert(t, index);
            count.insert(t, 1);
        }
        let dims = (z.end - z.start, shape[1], shape[2]);
        let mut read = |name: &str| -> Result<ndarray::Array3<f32>, FieldError> {
            let a = self.store.read_block_f32(name, &start, &count)?;
            let a = match self.time_axis {
                Some(t) => a.index_axis_move(NdAxis(t), 0),
                None => a,
            };
            // A block read from a file is already in standard layout: reshape it in place
            // (`as_standard_layout().into_owned()` would copy it).
            let a = if a.is_standard_layout() {
                a
            } else {
                a.as_standard_layout().into_owned()
            };
            a.into_shape_with_order(dims)
                .map_err(|e| FieldError::Corrupt(format!("unexpected block shape: {e}")))
        };
        let (u, v, w) = (read(&u)?, read(&v)?, read(&w)?);
        for (name, a) in [("u", &u), ("v", &v), ("w", &w)] {
            // Blocks are in standard layout (see `read`): count over the slice, which
            // vectorises, rather than through the n-dimensional iterator.
            let infinite: usize = match a.as_slice() {
                Some(s) => s.iter().map(|x| usize::from(x.is_infinite())).sum(),
                None => a.iter().filter(|x| x.is_infinite()).count(),
            };
            if infinite > 0 {
                return Err(FieldError::NonFinite {
                    component: name.to_string(),
                    count: infinite,
                });
            }
        }
        let flagged = match self.mask.clone() {
            Some(m) => Some(read(&m)?.mapv(|x| x != 0.0)),
            None => None,
        };
        Ok(super::VolumePlanes {
            z,
            u,
            v,
            w,
            flagged,
        })
    }
}

impl<S: ArrayStore> ArrayReader<S> {
    fn read_inner(&mut self, index: usize) -> Result<Snapshot, FieldError> {
        if index >= self.info.snapshots {
            return Err(FieldError::IndexOutOfRange {
                index,
                len: self.info.snapshots,
            });
        }
        let mut comps: Vec<ArrayD<f64>> = match self.components.clone() {
            Components::Separate { u, v, w } => {
                let mut c = vec![
                    self.read_component(&u, index)?,
                    self.read_component(&v, index)?,
                ];
                if let Some(w) = w {
                    c.push(self.read_component(&w, index)?);
                }
                c
            }
            Components::Stacked { array, axis, count } => {
                let all = self.read_component(&array, index)?;
                (0..count)
                    .map(|k| all.index_axis(NdAxis(axis), k).to_owned())
                    .collect()
            }
        };
        let flagged = match self.mask.clone() {
            Some(m) => Some(self.read_component(&m, index)?.mapv(|x| x != 0.0)),
            None => None,
        };
        let grid = self.info.grid.clone();
        let field = match self.spec_geometry {
            Geometry::Plane => {
                let to2 = |a: ArrayD<f64>| {
                    a.into_dimensionality::<Ix2>()
                        .map_err(|e| FieldError::Corrupt(format!("unexpected rank: {e}")))
                };
                let w = if comps.len() == 3 {
                    Some(to2(comps.pop().expect("three components"))?)
                } else {
                    None
                };
                let v = to2(comps.pop().expect("v"))?;
                let u = to2(comps.pop().expect("u"))?;
                let flagged = flagged
                    .map(|f| f.into_dimensionality::<Ix2>())
                    .transpose()
                    .map_err(|e| FieldError::Corrupt(format!("mask rank: {e}")))?;
                Field::Plane(PlaneField::new(grid, u, v, w, flagged.as_ref())?)
            }
            Geometry::Volume => {
                if comps.len() != 3 {
                    return Err(FieldError::Missing {
                        kind: "array",
                        name: "w (a volume needs three components)".into(),
                        available: self.info.arrays.iter().map(|a| a.name.clone()).collect(),
                    });
                }
                let to3 = |a: ArrayD<f64>| {
                    a.mapv(|x| x as f32)
                        .into_dimensionality::<Ix3>()
                        .map_err(|e| FieldError::Corrupt(format!("unexpected rank: {e}")))
                };
                let w = to3(comps.pop().expect("w"))?;
                let v = to3(comps.pop().expect("v"))?;
                let u = to3(comps.pop().expect("u"))?;
                let flagged = flagged
                    .map(|f| f.into_dimensionality::<Ix3>())
                    .transpose()
                    .map_err(|e| FieldError::Corrupt(format!("mask rank: {e}")))?;
                Field::Volume(VolumeField::new(grid, u, v, w, flagged.as_ref())?)
            }
        };
        Ok(Snapshot {
            id: SnapshotId::new(&self.path, index),
            time: self.times.as_ref().map(|t| t[index]),
            field,
        })
    }
}
