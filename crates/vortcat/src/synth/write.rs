//! Writers for synthetic snapshots, in the formats vortcat reads.

use std::fs;
use std::path::{Path, PathBuf};

use anyhow::Context;
use ndarray::{s, Array1, Array2};
use ndarray_npy::{write_npy, NpzWriter};

use super::SynthFormat;

pub struct Writer {
    dir: PathBuf,
    format: SynthFormat,
    x: Array1<f64>,
    y: Array1<f64>,
    stack: Option<(hdf5::File, hdf5::Dataset, hdf5::Dataset, hdf5::Dataset)>,
}

impl Writer {
    pub fn new(
        dir: &Path,
        format: SynthFormat,
        n: usize,
        x: &[f64],
        y: &[f64],
    ) -> anyhow::Result<Self> {
        let x = Array1::from(x.to_vec());
        let y = Array1::from(y.to_vec());
        let stack = if format == SynthFormat::Hdf5 {
            let path = dir.join("snapshots.h5");
            let f = hdf5::File::create(&path).with_context(|| format!("{}", path.display()))?;
            let (ny, nx) = (y.len(), x.len());
            let make = |name: &str| -> anyhow::Result<hdf5::Dataset> {
                let d = f
                    .new_dataset::<f64>()
                    .shape((n, ny, nx))
                    .chunk((1, ny, nx))
                    .deflate(4)
                    .create(name)?;
                let unit: hdf5::types::VarLenUnicode = "m/s".parse().expect("ascii");
                d.new_attr::<hdf5::types::VarLenUnicode>()
                    .create("units")?
                    .write_scalar(&unit)?;
                Ok(d)
            };
            let du = make("u")?;
            let dv = make("v")?;
            let dt = f.new_dataset::<f64>().shape(n).create("t")?;
            for (name, a) in [("x", &x), ("y", &y)] {
                let d = f.new_dataset_builder().with_data(a).create(name)?;
                let unit: hdf5::types::VarLenUnicode = "m".parse().expect("ascii");
                d.new_attr::<hdf5::types::VarLenUnicode>()
                    .create("units")?
                    .write_scalar(&unit)?;
            }
            Some((f, du, dv, dt))
        } else {
            None
        };
        Ok(Self {
            dir: dir.to_path_buf(),
            format,
            x,
            y,
            stack,
        })
    }

    /// Writes snapshot `s`; returns (file relative to the folder, index in it).
    pub fn write(
        &mut self,
        s: usize,
        t: f64,
        u: &Array2<f64>,
        v: &Array2<f64>,
    ) -> anyhow::Result<(String, usize)> {
        let stem = format!("snap_{s:04}");
        match self.format {
            SynthFormat::Npz => {
                let name = format!("{stem}.npz");
                let path = self.dir.join(&name);
                // Stored, not deflated: noisy velocity data shrink by only ~5 % and every reader
                // would pay for decompression (a third of a survey's time in the benchmark).
                let mut w = NpzWriter::new(
                    fs::File::create(&path).with_context(|| format!("{}", path.display()))?,
                );
                w.add_array("u", u)?;
                w.add_array("v", v)?;
                w.add_array("x", &self.x)?;
                w.add_array("y", &self.y)?;
                w.add_array("t", &ndarray::arr0(t))?;
                w.finish()?;
                Ok((name, 0))
            }
            SynthFormat::Npy => {
                let folder = self.dir.join(&stem);
                fs::create_dir_all(&folder)?;
                write_npy(folder.join("u.npy"), u)?;
                write_npy(folder.join("v.npy"), v)?;
                write_npy(folder.join("x.npy"), &self.x)?;
                write_npy(folder.join("y.npy"), &self.y)?;
                Ok((stem, 0))
            }
            SynthFormat::Csv => {
                let name = format!("{stem}.csv");
                let mut text = String::with_capacity(u.len() * 64);
                text.push_str("x,y,u,v\n");
                for ((j, i), &uu) in u.indexed_iter() {
                    let fmt = |a: f64| {
                        if a.is_nan() {
                            String::new()
                        } else {
                            format!("{a:e}")
                        }
                    };
                    text.push_str(&format!(
                        "{:e},{:e},{},{}\n",
                        self.x[i],
                        self.y[j],
                        fmt(uu),
                        fmt(v[[j, i]])
                    ));
                }
                fs::write(self.dir.join(&name), text)?;
                Ok((name, 0))
            }
            SynthFormat::Hdf5 => {
                let (_, du, dv, dt) = self.stack.as_ref().expect("stack opened");
                du.write_slice(u, s![s, .., ..])?;
                dv.write_slice(v, s![s, .., ..])?;
                dt.write_slice(&ndarray::arr1(&[t]), s![s..s + 1])?;
                Ok(("snapshots.h5".to_string(), s))
            }
        }
    }

    pub fn finish(self) -> anyhow::Result<()> {
        if let Some((f, ..)) = self.stack {
            f.flush()?;
        }
        Ok(())
    }
}
