//! Where a volume comes from: a [`VolumeSource`] hands out blocks of z-planes, so that the
//! survey never needs the whole volume in memory. [`MemoryVolume`] wraps a
//! [`VolumeField`] already in memory (tests, small fields); [`ReaderVolume`] reads planes from
//! a file through `vortcat_field::SnapshotReader::read_volume_planes` (HDF5 hyperslabs,
//! positioned `.npy` reads).

use std::ops::Range;

use ndarray::s;
use vortcat_field::{Grid, SnapshotReader, VolumeField, VolumePlanes};

use crate::error::TubeError;

/// A volume read in blocks of z-planes. `Send`: the survey reads the next slab on a thread of
/// its own while it works on the current one.
pub trait VolumeSource: Send {
    /// The grid of the whole volume (3D).
    fn grid(&self) -> &Grid;
    /// Planes `z` (global indices, within `0..nz`), arrays `[iz − z.start, iy, ix]`.
    fn read_planes(&mut self, z: Range<usize>) -> Result<VolumePlanes, TubeError>;
}

/// A volume already in memory.
#[derive(Debug, Clone, Copy)]
pub struct MemoryVolume<'a>(pub &'a VolumeField);

impl VolumeSource for MemoryVolume<'_> {
    fn grid(&self) -> &Grid {
        self.0.grid()
    }

    fn read_planes(&mut self, z: Range<usize>) -> Result<VolumePlanes, TubeError> {
        let f = self.0;
        let cut = |a: &ndarray::Array3<f32>| a.slice(s![z.clone(), .., ..]).to_owned();
        Ok(VolumePlanes {
            z: z.clone(),
            u: cut(f.u()),
            v: cut(f.v()),
            w: cut(f.w()),
            flagged: Some(f.valid().slice(s![z.clone(), .., ..]).mapv(|ok| !ok)),
        })
    }
}

/// One volume snapshot of an opened file, read plane block by plane block.
pub struct ReaderVolume<'a> {
    reader: &'a mut dyn SnapshotReader,
    index: usize,
    grid: Grid,
}

impl<'a> ReaderVolume<'a> {
    /// Snapshot `index` of `reader`. Errors: the source is not a volume.
    pub fn new(reader: &'a mut dyn SnapshotReader, index: usize) -> Result<Self, TubeError> {
        let grid = reader.info().grid.clone();
        if grid.ndim() != 3 {
            return Err(TubeError::NotAVolume { found: grid.ndim() });
        }
        Ok(Self {
            reader,
            index,
            grid,
        })
    }
}

impl VolumeSource for ReaderVolume<'_> {
    fn grid(&self) -> &Grid {
        &self.grid
    }

    fn read_planes(&mut self, z: Range<usize>) -> Result<VolumePlanes, TubeError> {
        Ok(self.reader.read_volume_planes(self.index, z)?)
    }
}
