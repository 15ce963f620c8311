//! PNG encoding of a drawn picture: 8-bit RGB, not interlaced, written by the `png` crate.
//!
//! Pipeline stage: report writers (PNG plots). The last step of every plot: `frame::render`
//! draws into a tightly packed RGB buffer and hands it here. The encoding is lossless, so
//! the encoder settings change the file size only, never a pixel.
//!
//! ## Reference
//! - W3C / ISO/IEC 15948:2003, *Portable Network Graphics (PNG) Specification*, 2nd ed.

use anyhow::{Context, Result, ensure};

/// Encodes a tightly packed 8-bit RGB buffer (`width × height` pixels, row by row) as PNG.
pub(super) fn encode_png(width: u32, height: u32, rgb: &[u8]) -> Result<Vec<u8>> {
    let stride = width as usize * 3;
    ensure!(
        stride > 0 && rgb.len() == stride * height as usize,
        "PNG encoder: buffer of {} bytes does not match {width} × {height} RGB",
        rgb.len()
    );
    let mut png = Vec::new();
    let mut encoder = png::Encoder::new(&mut png, width, height);
    encoder.set_color(png::ColorType::Rgb);
    encoder.set_depth(png::BitDepth::Eight);
    encoder.set_compression(png::Compression::Balanced);
    let mut writer = encoder
        .write_header()
        .context("PNG encoder: could not write the header")?;
    writer
        .write_image_data(rgb)
        .context("PNG encoder: could not write the pixels")?;
    writer
        .finish()
        .context("PNG encoder: could not finish the file")?;
    Ok(png)
}

#[cfg(test)]
mod tests {
    use super::super::testkit::decode;
    use super::*;

    #[test]
    fn encoder_round_trips_noise_flat_and_stripes() {
        let (w, h) = (37u32, 23u32);
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        let noise: Vec<u8> = (0..w * h * 3)
            .map(|_| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                (state >> 24) as u8
            })
            .collect();
        let flat = vec![200u8; (w * h * 3) as usize];
        let stripes: Vec<u8> = (0..w * h * 3)
            .map(|i| if (i / 3) % 7 < 3 { 10 } else { 250 })
            .collect();
        for img in [noise, flat, stripes] {
            let png = encode_png(w, h, &img).unwrap();
            assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "PNG signature");
            let (dw, dh, rgb) = decode(&png);
            assert_eq!((dw, dh), (w, h));
            assert_eq!(rgb, img);
        }
        assert!(
            encode_png(w, h, &[0u8; 5]).is_err(),
            "wrong buffer length is an error"
        );
    }
}
