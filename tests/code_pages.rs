//! Layer names in the code page `$DWGCODEPAGE` names (files before R2007), and in UTF-8.

use std::path::Path;

use sectio::import::dxf::read;
use sectio::import::{Drawing, ReadOptions};

/// A drawing with the given header variables (`$ACADVER`, `$DWGCODEPAGE`), one LAYER table
/// entry and one LINE on that layer; `layer` is written as raw bytes.
fn drawing(acadver: &str, code_page: Option<&str>, layer: &[u8]) -> Vec<u8> {
    let mut b: Vec<u8> = Vec::new();
    b.extend_from_slice(b"0\nSECTION\n2\nHEADER\n9\n$ACADVER\n1\n");
    b.extend_from_slice(acadver.as_bytes());
    b.push(b'\n');
    if let Some(cp) = code_page {
        b.extend_from_slice(b"9\n$DWGCODEPAGE\n3\n");
        b.extend_from_slice(cp.as_bytes());
        b.push(b'\n');
    }
    b.extend_from_slice(b"0\nENDSEC\n0\nSECTION\n2\nTABLES\n0\nTABLE\n2\nLAYER\n0\nLAYER\n2\n");
    b.extend_from_slice(layer);
    b.extend_from_slice(
        b"\n70\n0\n62\n7\n0\nENDTAB\n0\nENDSEC\n0\nSECTION\n2\nENTITIES\n0\nLINE\n8\n",
    );
    b.extend_from_slice(layer);
    b.extend_from_slice(b"\n10\n0\n20\n0\n11\n10\n21\n0\n0\nENDSEC\n0\nEOF\n");
    b
}

fn census() -> ReadOptions {
    ReadOptions {
        census: true,
        ..ReadOptions::default()
    }
}

fn layer_of(d: &Drawing) -> &str {
    assert_eq!(d.pieces.len(), 1, "{:?}", d.skipped);
    &d.pieces[0].layer
}

// Byte values: "Профиль" in Windows-1251 and "図面" in Shift-JIS, from the code page tables of
// the WHATWG Encoding Standard as Python's codecs give them ("Профиль".encode("cp1251"),
// "図面".encode("shift_jis")).
const PROFIL_CP1251: &[u8] = b"\xcf\xf0\xee\xf4\xe8\xeb\xfc";
const ZUMEN_SHIFT_JIS: &[u8] = b"\x90\x7d\x96\xca";

#[test]
fn cyrillic_layer_name_in_windows_1251() {
    let bytes = drawing("AC1015", Some("ANSI_1251"), PROFIL_CP1251);
    let d = read(&bytes, &census()).unwrap();
    assert_eq!(layer_of(&d), "Профиль");
    assert_eq!(d.file.code_page.as_deref(), Some("ANSI_1251"));
    assert_eq!(d.file.version.as_deref(), Some("AC1015"));
    assert_eq!(d.file.text_encoding, "windows-1251");
    assert_eq!(d.file.layer_table[0].name, "Профиль");
    let counted: Vec<&(String, String)> = d.file.entity_counts.keys().collect();
    assert_eq!(counted, [&("Профиль".to_string(), "LINE".to_string())]);
    assert!(d.notes.is_empty(), "{:?}", d.notes);
    // Layer globs see the decoded name.
    let only = ReadOptions {
        layers: vec!["проф*".into()],
        ..ReadOptions::default()
    };
    assert_eq!(read(&bytes, &only).unwrap().pieces.len(), 1);
}

#[test]
fn japanese_layer_name_in_shift_jis() {
    for code_page in ["ANSI_932", "dos932"] {
        let bytes = drawing("AC1012", Some(code_page), ZUMEN_SHIFT_JIS);
        let d = read(&bytes, &census()).unwrap();
        assert_eq!(layer_of(&d), "図面", "{code_page}");
        assert_eq!(d.file.text_encoding, "Shift_JIS");
    }
}

#[test]
fn without_a_known_code_page_names_are_windows_1252_and_utf8_stays_utf8() {
    // No $DWGCODEPAGE: Windows-1252, as before, without a note.
    let d = read(&drawing("AC1009", None, b"Tr\xe4ger"), &census()).unwrap();
    assert_eq!(layer_of(&d), "Träger");
    assert!(d.notes.is_empty(), "{:?}", d.notes);
    // A code page sectio does not know: Windows-1252, with a note, once a name needed it.
    let d = read(&drawing("AC1009", Some("DOS437"), b"Tr\xe4ger"), &census()).unwrap();
    assert_eq!(layer_of(&d), "Träger");
    assert_eq!(d.notes.len(), 1, "{:?}", d.notes);
    assert!(d.notes[0].contains("DOS437"), "{:?}", d.notes);
    let d = read(&drawing("AC1009", Some("DOS437"), b"PROFILE"), &census()).unwrap();
    assert!(d.notes.is_empty(), "{:?}", d.notes);
    // R2007 and later: UTF-8, whatever the code page says.
    let d = read(
        &drawing("AC1021", Some("ANSI_1251"), "Профиль".as_bytes()),
        &census(),
    )
    .unwrap();
    assert_eq!(layer_of(&d), "Профиль");
    // An older release with a single-byte code page, written as UTF-8 by its writer.
    let d = read(
        &drawing("AC1015", Some("ANSI_1252"), "Träger".as_bytes()),
        &census(),
    )
    .unwrap();
    assert_eq!(layer_of(&d), "Träger");
}

#[test]
fn header_after_the_entities_falls_back_with_a_note() {
    // The HEADER section after TABLES and ENTITIES (unusual): names met before it were read
    // as Windows-1252, and the note says so.
    let bytes = drawing("AC1015", None, PROFIL_CP1251);
    let eof = bytes.len() - "0\nEOF\n".len();
    let mut late = bytes[..eof].to_vec();
    late.extend_from_slice(
        b"0\nSECTION\n2\nHEADER\n9\n$DWGCODEPAGE\n3\nANSI_1251\n0\nENDSEC\n0\nEOF\n",
    );
    let d = read(&late, &census()).unwrap();
    assert_eq!(d.pieces.len(), 1);
    assert_eq!(d.notes.len(), 1, "{:?}", d.notes);
    assert!(d.notes[0].contains("$DWGCODEPAGE"), "{:?}", d.notes);
}

/// The corpus drawings that declare a code page, or hold bytes that are not UTF-8 (in texts),
/// read without errors and with their code page known (MANIFEST.md lists them).
#[test]
fn corpus_files_with_code_pages_read() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/corpus/real/dxf");
    if !dir.is_dir() {
        return; // the corpus is not part of the repository
    }
    for (name, code_page, encoding) in [
        (
            "r13_ac1012_footprint_polylines_dos932.dxf",
            Some("dos932"),
            "Shift_JIS",
        ),
        (
            "ac1021_closed_splines_cp1256_no_layouts.dxf",
            Some("ANSI_1256"),
            "windows-1256",
        ),
        (
            "r14_ac1014_mixed_entities_blocks.dxf",
            Some("ANSI_1252"),
            "windows-1252",
        ),
        ("r13_binary_lines.dxf", Some("ansi_1252"), "windows-1252"),
        ("r12_entity_sampler_ascii.dxf", None, "windows-1252"),
        (
            "ac1024_entity_catalog_in_blocks.dxf",
            Some("ASCII"),
            "windows-1252",
        ),
        (
            "ac1027_proxy_objects_cjk_strings.dxf",
            Some("ANSI_1252"),
            "windows-1252",
        ),
    ] {
        let bytes = std::fs::read(dir.join(name)).unwrap();
        let d = read(&bytes, &census()).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(d.file.code_page.as_deref(), code_page, "{name}");
        assert_eq!(d.file.text_encoding, encoding, "{name}");
        assert!(
            !d.notes.iter().any(|n| n.contains("DWGCODEPAGE")),
            "{name}: {:?}",
            d.notes
        );
    }
    // A UTF-8 layer name in an R2013 file stays as written, escape included.
    let bytes = std::fs::read(dir.join("ac1027_utf8_layer_name_no_entities.dxf")).unwrap();
    let d = read(&bytes, &census()).unwrap();
    assert!(
        d.file
            .layer_table
            .iter()
            .any(|l| l.name == "Tschüss mit \\U+00FC"),
        "{:?}",
        d.file.layer_table
    );
}
