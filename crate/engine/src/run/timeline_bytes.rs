//! The timeline's byte format: the whole store as one little-endian byte string, which a
//! worker hands to the page and a run folder keeps as `timeline.fftl` (own design).

use crate::run::timeline::*;

impl Timeline {
    /// The store as one byte string (little-endian), for handing between threads.
    pub fn to_bytes(&self) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.memory_bytes() + 64);
        out.extend_from_slice(MAGIC);
        for v in [
            self.n_cols as u32,
            self.n_rows as u32,
            self.start_year as u32,
            self.last_year as u32,
            self.keyframe_interval,
            self.frames.len() as u32,
            self.later_toggles.len() as u32,
        ] {
            out.extend_from_slice(&v.to_le_bytes());
        }
        for f in &self.frames {
            for v in [f.year as u32, f.col0, f.row0, f.width, f.height] {
                out.extend_from_slice(&v.to_le_bytes());
            }
            for q in &f.thickness_q {
                out.extend_from_slice(&q.to_le_bytes());
            }
        }
        out.extend_from_slice(&self.flags);
        for t in &self.first_toggle {
            out.extend_from_slice(&t.to_le_bytes());
        }
        for (cell, t) in &self.later_toggles {
            out.extend_from_slice(&cell.to_le_bytes());
            out.extend_from_slice(&t.to_le_bytes());
        }
        match &self.plants {
            None => out.push(0),
            Some(plants) => {
                out.push(1);
                let put = |out: &mut Vec<u8>, v: u32| out.extend_from_slice(&v.to_le_bytes());
                put(&mut out, plants.type_names.len() as u32);
                for name in &plants.type_names {
                    put(&mut out, name.len() as u32);
                    out.extend_from_slice(name.as_bytes());
                }
                put(&mut out, plants.stage_interval);
                put(&mut out, plants.cover_interval);
                put(&mut out, plants.stage_frames.len() as u32);
                for (year, frame) in &plants.stage_frames {
                    put(&mut out, *year as u32);
                    out.extend_from_slice(frame);
                }
                put(&mut out, plants.change_start.len() as u32);
                for &c in &plants.change_start {
                    put(&mut out, c);
                }
                put(&mut out, plants.changes.len() as u32);
                for &(cell, stage) in &plants.changes {
                    put(&mut out, cell);
                    out.push(stage);
                }
                put(&mut out, plants.cover_frames.len() as u32);
                for frame in &plants.cover_frames {
                    put(&mut out, frame.year as u32);
                    out.extend_from_slice(&frame.cover_q);
                    out.extend_from_slice(&frame.soil_q);
                }
            }
        }
        match &self.start {
            None => out.push(0),
            Some(start) => {
                out.push(1);
                for z in &start.bed_m {
                    out.extend_from_slice(&z.to_le_bytes());
                }
                out.extend(start.domain.iter().map(|&d| u8::from(d)));
                out.extend_from_slice(&(start.notes.len() as u32).to_le_bytes());
                for note in &start.notes {
                    out.extend_from_slice(&(note.len() as u32).to_le_bytes());
                    out.extend_from_slice(note.as_bytes());
                }
            }
        }
        out
    }

    /// Reads [`Timeline::to_bytes`] output, checking every size against the header.
    pub fn from_bytes(bytes: &[u8]) -> Result<Timeline, TimelineError> {
        let mut reader = Reader { bytes, offset: 0 };
        if reader.take(MAGIC.len())? != MAGIC {
            return Err(TimelineError::BadMagic);
        }
        let n_cols = reader.u32()? as usize;
        let n_rows = reader.u32()? as usize;
        let start_year = reader.u32()? as i32;
        let last_year = reader.u32()? as i32;
        let keyframe_interval = reader.u32()?;
        let n_frames = reader.u32()? as usize;
        let n_later = reader.u32()? as usize;
        let n_cells = n_cols
            .checked_mul(n_rows)
            .filter(|&n| n <= crate::MAX_CELLS)
            .ok_or(TimelineError::Inconsistent("grid size"))?;
        if n_frames == 0 || last_year < start_year || keyframe_interval == 0 {
            return Err(TimelineError::Inconsistent("header"));
        }
        let mut frames = Vec::with_capacity(n_frames.min(4096));
        for _ in 0..n_frames {
            let year = reader.u32()? as i32;
            let (col0, row0, width, height) =
                (reader.u32()?, reader.u32()?, reader.u32()?, reader.u32()?);
            if col0 as usize + width as usize > n_cols || row0 as usize + height as usize > n_rows {
                return Err(TimelineError::Inconsistent("frame box outside the grid"));
            }
            let raw = reader.take(2 * width as usize * height as usize)?;
            let thickness_q = raw
                .chunks_exact(2)
                .map(|c| u16::from_le_bytes([c[0], c[1]]))
                .collect();
            frames.push(Frame {
                year,
                col0,
                row0,
                width,
                height,
                thickness_q,
            });
        }
        if frames.windows(2).any(|w| w[0].year >= w[1].year) {
            return Err(TimelineError::Inconsistent("keyframe years out of order"));
        }
        let flags = reader.take(n_cells)?.to_vec();
        let first_toggle = reader
            .take(2 * n_cells)?
            .chunks_exact(2)
            .map(|c| u16::from_le_bytes([c[0], c[1]]))
            .collect();
        let mut later_toggles = Vec::with_capacity(n_later.min(n_cells));
        for _ in 0..n_later {
            let cell = reader.u32()?;
            let raw = reader.take(2)?;
            if cell as usize >= n_cells {
                return Err(TimelineError::Inconsistent("toggle cell outside the grid"));
            }
            later_toggles.push((cell, u16::from_le_bytes([raw[0], raw[1]])));
        }
        let plants = match reader.take(1)?[0] {
            0 => None,
            1 => Some(read_plants(&mut reader, n_cells, start_year, last_year)?),
            _ => return Err(TimelineError::Inconsistent("plant flag")),
        };
        let start = match reader.take(1)?[0] {
            0 => None,
            1 => Some(read_start(&mut reader, n_cells)?),
            _ => return Err(TimelineError::Inconsistent("start flag")),
        };
        Ok(Timeline {
            plants,
            start,
            max_thickness_q: max_q(&frames),
            n_cols,
            n_rows,
            start_year,
            last_year,
            keyframe_interval,
            frames,
            flags,
            first_toggle,
            later_toggles,
        })
    }
}

/// Reads the start part of [`Timeline::to_bytes`] output.
fn read_start(reader: &mut Reader, n_cells: usize) -> Result<RunStart, TimelineError> {
    let bed_m = reader
        .take(4 * n_cells)?
        .chunks_exact(4)
        .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]))
        .collect();
    let domain = reader.take(n_cells)?.iter().map(|&d| d != 0).collect();
    let n_notes = reader.u32()? as usize;
    if n_notes > 64 {
        return Err(TimelineError::Inconsistent("start notes"));
    }
    let mut notes = Vec::with_capacity(n_notes);
    for _ in 0..n_notes {
        let len = reader.u32()? as usize;
        let text = std::str::from_utf8(reader.take(len)?)
            .map_err(|_| TimelineError::Inconsistent("start note text"))?;
        notes.push(text.to_string());
    }
    Ok(RunStart {
        bed_m,
        domain,
        notes,
    })
}

/// Reads the plant part of [`Timeline::to_bytes`] output.
fn read_plants(
    reader: &mut Reader,
    n_cells: usize,
    start_year: i32,
    last_year: i32,
) -> Result<PlantTrack, TimelineError> {
    let n_years = (last_year - start_year) as usize;
    let n_types = reader.u32()? as usize;
    if n_types > 64 {
        return Err(TimelineError::Inconsistent("number of plant types"));
    }
    let mut type_names = Vec::with_capacity(n_types);
    for _ in 0..n_types {
        let len = reader.u32()? as usize;
        let raw = reader.take(len)?;
        type_names.push(
            String::from_utf8(raw.to_vec())
                .map_err(|_| TimelineError::Inconsistent("plant type name"))?,
        );
    }
    let stage_interval = reader.u32()?;
    let cover_interval = reader.u32()?;
    if stage_interval == 0 || cover_interval == 0 {
        return Err(TimelineError::Inconsistent("plant keyframe interval"));
    }
    let n_stage_frames = reader.u32()? as usize;
    let mut stage_frames = Vec::with_capacity(n_stage_frames.min(4096));
    for _ in 0..n_stage_frames {
        let year = reader.u32()? as i32;
        stage_frames.push((year, reader.take(n_cells)?.to_vec()));
    }
    if stage_frames.first().map(|f| f.0) != Some(start_year)
        || stage_frames.windows(2).any(|w| w[0].0 >= w[1].0)
    {
        return Err(TimelineError::Inconsistent("stage keyframe years"));
    }
    let n_starts = reader.u32()? as usize;
    if n_starts == 0 || n_starts > n_years + 1 {
        return Err(TimelineError::Inconsistent("stage change index"));
    }
    let mut change_start = Vec::with_capacity(n_starts);
    for _ in 0..n_starts {
        change_start.push(reader.u32()?);
    }
    let n_changes = reader.u32()? as usize;
    if change_start.windows(2).any(|w| w[0] > w[1])
        || change_start[0] != 0
        || change_start[n_starts - 1] as usize != n_changes
    {
        return Err(TimelineError::Inconsistent("stage change index"));
    }
    let raw = reader.take(
        n_changes
            .checked_mul(5)
            .ok_or(TimelineError::Inconsistent("stage changes"))?,
    )?;
    let mut changes = Vec::with_capacity(n_changes);
    for c in raw.chunks_exact(5) {
        let cell = u32::from_le_bytes([c[0], c[1], c[2], c[3]]);
        if cell as usize >= n_cells {
            return Err(TimelineError::Inconsistent("stage change outside the grid"));
        }
        changes.push((cell, c[4]));
    }
    let n_cover_frames = reader.u32()? as usize;
    if n_cover_frames == 0 {
        return Err(TimelineError::Inconsistent("no cover keyframe"));
    }
    let mut cover_frames = Vec::with_capacity(n_cover_frames.min(4096));
    for _ in 0..n_cover_frames {
        let year = reader.u32()? as i32;
        let cover_q = reader.take(n_types * n_cells)?.to_vec();
        let soil_q = reader.take(n_cells)?.to_vec();
        cover_frames.push(CoverFrame {
            year,
            cover_q,
            soil_q,
        });
    }
    if cover_frames.windows(2).any(|w| w[0].year >= w[1].year) {
        return Err(TimelineError::Inconsistent(
            "cover keyframe years out of order",
        ));
    }
    Ok(PlantTrack {
        type_names,
        stage_interval,
        stage_frames,
        change_start,
        changes,
        cover_interval,
        cover_frames,
    })
}

struct Reader<'a> {
    bytes: &'a [u8],
    offset: usize,
}

impl<'a> Reader<'a> {
    fn take(&mut self, n: usize) -> Result<&'a [u8], TimelineError> {
        let end = self
            .offset
            .checked_add(n)
            .filter(|&end| end <= self.bytes.len())
            .ok_or(TimelineError::Truncated {
                offset: self.offset,
                needed: n,
            })?;
        let slice = &self.bytes[self.offset..end];
        self.offset = end;
        Ok(slice)
    }

    fn u32(&mut self) -> Result<u32, TimelineError> {
        let raw = self.take(4)?;
        Ok(u32::from_le_bytes([raw[0], raw[1], raw[2], raw[3]]))
    }
}
