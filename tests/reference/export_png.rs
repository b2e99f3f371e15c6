//! PNG snapshots decoded by the `png` crate (a PNG decoder checking signature, chunk CRCs
//! and zlib streams per ISO/IEC 15948:2004): the image holds the map at one pixel per cell,
//! pixel for pixel what the page's layer renderer draws, and the legend beside it shows
//! every class colour of the layer as a solid swatch.

use forefield_engine::export::bed_renderer;
use forefield_engine::export::png_snapshot::snapshot_png;
use forefield_engine::view::layers::{legend, LayerKind};

use crate::export_fixture::export_run;

fn decode(bytes: &[u8]) -> (usize, usize, Vec<u8>) {
    let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!(info.color_type, png::ColorType::Rgba);
    assert_eq!(info.bit_depth, png::BitDepth::Eight);
    buf.truncate(info.buffer_size());
    (info.width as usize, info.height as usize, buf)
}

#[test]
fn snapshot_holds_the_rendered_map_at_full_resolution_and_its_legend() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let year = timeline.start_year() + 20;
    for kind in [LayerKind::Stage, LayerKind::IceThickness] {
        let mut renderer = bed_renderer(dem, timeline);
        let shot = snapshot_png(timeline, &mut renderer, dem, &run.meta, kind, year).unwrap();
        let (w, h, rgba) = decode(&shot.png);
        assert_eq!((w, h), (shot.width, shot.height));
        assert!(w >= shot.map_x + dem.n_cols() && h >= shot.map_y + dem.n_rows());
        let mut map = Vec::new();
        renderer.render(timeline, kind, year, &mut map);
        let px = |x: usize, y: usize| &rgba[4 * (y * w + x)..4 * (y * w + x) + 4];
        for row in 0..dem.n_rows() {
            for col in 0..dem.n_cols() {
                let m = &map[4 * (row * dem.n_cols() + col)..][..4];
                let p = px(shot.map_x + col, shot.map_y + row);
                if m[3] == 255 {
                    assert_eq!(&p[..3], &m[..3], "{kind:?} cell ({col}, {row})");
                }
                assert_eq!(p[3], 255);
            }
        }
        // Each class of the legend appears as a solid 12 x 12 swatch right of the map.
        let right = shot.map_x + dem.n_cols();
        for class in legend(timeline, kind).classes {
            let found = (shot.map_y..h - 12).any(|y| {
                (right..w - 12).any(|x| {
                    (0..12).all(|dy| (0..12).all(|dx| px(x + dx, y + dy)[..3] == class.rgb))
                })
            });
            assert!(found, "{kind:?}: no swatch for {}", class.label);
        }
        // Same inputs, same bytes (what makes the page's and the command line's files equal).
        let again = snapshot_png(timeline, &mut renderer, dem, &run.meta, kind, year).unwrap();
        assert_eq!(again.png, shot.png);
    }
}
