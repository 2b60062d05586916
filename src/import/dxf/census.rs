//! Counting model-space entities by layer and type, for `sectio explain`.
//!
//! Only with [`ReadOptions::census`]: the entity loop then calls [`Reader::count_entity`] at
//! each `0/TYPE` pair, which looks ahead on a copy of the pair stream for the entity's layer
//! (group 8) and paper-space flag (group 67), so the entity readers are not changed and
//! measuring pays one test of a flag per entity. Entities are counted whatever becomes of
//! them (read, skipped by type, by layer or for their geometry), except those in paper
//! space, which are only counted as skipped. The counts are keyed by the bytes as written and
//! decoded once at the end, when the code page is surely known.
//!
//! [`ReadOptions::census`]: crate::import::ReadOptions::census

use super::{decode_text, Reader};

impl<'a> Reader<'a, '_> {
    /// Count the entity whose `0/TYPE` pair is current.
    pub(super) fn count_entity(&mut self) {
        let ty = self.pairs.cur.text();
        if matches!(ty, b"ENDSEC" | b"SECTION" | b"EOF") {
            return;
        }
        let mut ahead = self.pairs.clone();
        let mut layer: Option<&'a [u8]> = None;
        // A damaged entity ends the look-ahead; the entity reader reports it.
        while let Ok(true) = ahead.advance() {
            let p = &ahead.cur;
            match p.code {
                0 => break,
                8 if layer.is_none() => layer = Some(p.text()),
                67 if matches!(p.int(), Ok(1)) => return, // paper space
                _ => {}
            }
        }
        // An entity without group 8 is on layer 0 (DXF reference, common group codes).
        let key = (layer.unwrap_or(b"0"), ty);
        *self.census.entry(key).or_insert(0) += 1;
    }

    /// Decode the counted names into [`FileFacts::entity_counts`].
    ///
    /// [`FileFacts::entity_counts`]: crate::import::FileFacts::entity_counts
    pub(super) fn finish_census(&mut self) {
        for ((layer, ty), n) in std::mem::take(&mut self.census) {
            let key = (self.layers.coding.decode(layer), decode_text(ty));
            *self.drawing.file.entity_counts.entry(key).or_insert(0) += n;
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::import::dxf::read;
    use crate::import::{LayerState, ReadOptions};

    #[test]
    fn entities_are_counted_by_layer_and_type_only_when_asked() {
        let text = "0\nSECTION\n2\nTABLES\n0\nTABLE\n2\nLAYER\n0\nLAYER\n2\nDIM\n70\n1\n62\n-7\n0\nENDTAB\n0\nENDSEC\n\
                    0\nSECTION\n2\nENTITIES\n\
                    0\nLINE\n8\nP\n10\n0\n20\n0\n11\n1\n21\n0\n\
                    0\nLINE\n8\nP\n10\n1\n20\n0\n11\n1\n21\n1\n\
                    0\nTEXT\n8\nDIM\n1\nabc\n\
                    0\nPOLYLINE\n8\nP\n66\n1\n0\nVERTEX\n8\nP\n10\n0\n20\n0\n0\nVERTEX\n8\nP\n10\n1\n20\n0\n0\nSEQEND\n\
                    0\nCIRCLE\n10\n0\n20\n0\n40\n1\n\
                    0\nCIRCLE\n8\nP\n67\n1\n10\n0\n20\n0\n40\n1\n\
                    0\nENDSEC\n0\nEOF\n";
        let plain = read(text.as_bytes(), &ReadOptions::default()).unwrap();
        assert!(plain.file.entity_counts.is_empty());
        assert!(plain.file.layer_table.is_empty());
        let opts = ReadOptions {
            census: true,
            ..ReadOptions::default()
        };
        let d = read(text.as_bytes(), &opts).unwrap();
        assert_eq!(d.pieces, plain.pieces);
        let counts: Vec<(&str, &str, usize)> = d
            .file
            .entity_counts
            .iter()
            .map(|((l, t), n)| (l.as_str(), t.as_str(), *n))
            .collect();
        // The POLYLINE's VERTEX and SEQEND belong to it; the paper-space CIRCLE is not counted.
        assert_eq!(
            counts,
            [
                ("0", "CIRCLE", 1),
                ("DIM", "TEXT", 1),
                ("P", "LINE", 2),
                ("P", "POLYLINE", 1)
            ]
        );
        assert_eq!(
            d.file.layer_table,
            [LayerState {
                name: "DIM".into(),
                off: true,
                frozen: true
            }]
        );
    }
}
