//! Typesetting of in-memory typst sources to PDF.
//!
//! The report generator writes typst markup as strings and plots as SVG bytes;
//! nothing it produces ever touches the disk before the final PDF. This module
//! therefore implements [`typst::World`] over a set of in-memory files, with the
//! fonts embedded in `typst-kit` as the only fonts: output must not depend on
//! what happens to be installed on the machine that renders it.

use std::collections::HashMap;
use std::fmt;
use std::sync::OnceLock;

use typst::diag::{FileError, FileResult, PackageError, Severity, SourceDiagnostic};
use typst::foundations::{Bytes, Datetime, Duration, Smart};
use typst::syntax::{DiagSpan, FileId, Lines, RootedPath, Source, VirtualPath, VirtualRoot};
use typst::text::{Font, FontBook};
use typst::utils::LazyHash;
use typst::{Library, LibraryExt, World, WorldExt};
use typst_kit::fonts::FontStore;
use typst_layout::PagedDocument;
use typst_pdf::{PdfOptions, PdfStandard, PdfStandards, Timestamp};

/// The path under which the document source is always served. Keeping it fixed
/// means the main file costs exactly one interned file id for the whole life of
/// the process, however many documents are built.
const MAIN_PATH: &str = "/main.typ";

/// How many compilations a memoised typst result may go unused before it is
/// dropped. typst's caches (comemo) are process-global and otherwise grow
/// without bound when hundreds of packages are built in one process; keeping a
/// few generations still lets a rebuild of a similar document reuse its layout.
/// Three, not ten: with the power stage's sections a package is about 50 pages, and
/// ten generations of its layout held the benchmark's peak memory at 188 MB against
/// 152 MB with three, for a few percent on repeated builds.
const CACHE_MAX_AGE: usize = 3;

/// Compiles typst sources held in memory to PDF with embedded fonts only.
pub struct Typesetter {
    library: LazyHash<Library>,
    fonts: FontStore,
}

/// A file, other than the main source, that a document may load by absolute
/// path: a typst module for `#import`/`#include`, or data for `image(...)`,
/// `read(...)` and similar.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Asset {
    /// Absolute path inside the document's virtual root, e.g. `/style.typ`.
    pub path: String,
    /// The file's contents.
    pub bytes: Vec<u8>,
}

/// A typeset document.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pdf {
    /// The PDF file.
    pub bytes: Vec<u8>,
    /// Number of pages in the document.
    pub pages: usize,
}

/// Why a document could not be typeset: typst's diagnostics, each rendered as
/// readable text naming the file, line and column inside the generated source,
/// followed by the hints typst gives.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TypesetError {
    /// One entry per diagnostic; an entry may span several lines (location,
    /// the offending source line, hints, call trace).
    pub diagnostics: Vec<String>,
}

impl TypesetError {
    /// An error raised by this module itself rather than by typst.
    fn plain(message: impl Into<String>) -> Self {
        Self {
            diagnostics: vec![format!("error: {}", message.into())],
        }
    }
}

impl fmt::Display for TypesetError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.diagnostics.is_empty() {
            // typst never fails without a diagnostic, but an empty list must
            // still read as an error rather than as nothing.
            return f.write_str("typesetting failed");
        }
        f.write_str(&self.diagnostics.join("\n"))
    }
}

impl std::error::Error for TypesetError {}

impl Typesetter {
    /// Shared process-wide instance (OnceLock): fonts are parsed once.
    pub fn shared() -> &'static Typesetter {
        static SHARED: OnceLock<Typesetter> = OnceLock::new();
        SHARED.get_or_init(Typesetter::new)
    }

    fn new() -> Self {
        let mut fonts = FontStore::new();
        fonts.extend(typst_kit::fonts::embedded());
        Self {
            library: LazyHash::new(Library::default()),
            fonts,
        }
    }

    /// `main` is the typst source of the document (its path is always
    /// "/main.typ"). `assets` are other files it may `#import`/`#include`/
    /// `image(...)` by absolute path. `date` is the document date (year, month,
    /// day) used for `datetime.today()` and as the PDF creation timestamp so
    /// that output is byte-reproducible; `ident` is a stable document
    /// identifier string for the PDF.
    pub fn compile(
        &self,
        main: &str,
        assets: &[Asset],
        date: (i32, u8, u8),
        ident: &str,
    ) -> Result<Pdf, TypesetError> {
        let (year, month, day) = date;
        let today = Datetime::from_ymd(year, month, day).ok_or_else(|| {
            TypesetError::plain(format!(
                "invalid document date {year:04}-{month:02}-{day:02}"
            ))
        })?;

        let world = DocumentWorld::new(self, main, assets, today)?;
        let result = typeset(&world, today, ident);

        // Age the global caches only after the PDF exists, so this build could
        // still hit results from the builds just before it.
        typst::comemo::evict(CACHE_MAX_AGE);
        result
    }
}

/// Lays out the world's main file and exports it.
fn typeset(world: &DocumentWorld, today: Datetime, ident: &str) -> Result<Pdf, TypesetError> {
    let warned = typst::compile::<PagedDocument>(world);
    let document = warned
        .output
        .map_err(|errors| render_all(world, errors.iter().chain(&warned.warnings)))?;

    let options = PdfOptions {
        // A caller-given identifier instead of typst's title/author hash keeps
        // the PDF /ID stable even when a revision changes the title.
        ident: Smart::Custom(ident.to_owned()),
        // Without an explicit timestamp typst writes no date at all, which
        // PDF/A forbids; with the wall clock the bytes would differ per run.
        timestamp: Some(Timestamp::new_utc(today)),
        // PDF/A-3b: archival, and (unlike PDF/A-2) it allows the attached record and
        // results that make the PDF a self-contained record of the package.
        standards: PdfStandards::new(&[PdfStandard::A_3b])
            .map_err(|e| TypesetError::plain(format!("internal error: PDF/A: {e:?}")))?,
        ..PdfOptions::default()
    };
    let bytes = typst_pdf::pdf(&document, &options).map_err(|errors| render_all(world, &errors))?;

    Ok(Pdf {
        bytes,
        pages: document.pages().len(),
    })
}

/// One file that the world can serve.
struct FileSlot {
    bytes: Bytes,
    /// Parsed on first request: most assets are images that are never parsed
    /// as typst, and typst asks for the same module many times per compile.
    source: OnceLock<FileResult<Source>>,
}

/// The files of one document, over the fonts and library of a [`Typesetter`].
struct DocumentWorld<'a> {
    typesetter: &'a Typesetter,
    main: FileId,
    files: HashMap<FileId, FileSlot>,
    today: Datetime,
}

/// The interned id of a path in the document's root. Interning the same path
/// again returns the same id, so rebuilding documents with the same file names
/// does not use up typst's 65,535 ids.
fn project_file(path: &str) -> Result<FileId, TypesetError> {
    let vpath = VirtualPath::new(path)
        .map_err(|err| TypesetError::plain(format!("invalid asset path {path:?}: {err}")))?;
    Ok(RootedPath::new(VirtualRoot::Project, vpath).intern())
}

impl<'a> DocumentWorld<'a> {
    fn new(
        typesetter: &'a Typesetter,
        main: &str,
        assets: &[Asset],
        today: Datetime,
    ) -> Result<Self, TypesetError> {
        let main_id = project_file(MAIN_PATH)?;
        // A fresh `Source` per build: typst's memoisation keys on the content,
        // so unchanged text still hits the cache while changed text can never
        // be served stale.
        let main_source = Source::new(main_id, main.to_owned());
        let mut files = HashMap::with_capacity(assets.len() + 1);
        files.insert(
            main_id,
            FileSlot {
                bytes: Bytes::from_string(main_source.clone()),
                source: OnceLock::from(Ok(main_source)),
            },
        );

        for asset in assets {
            let id = project_file(&asset.path)?;
            let slot = FileSlot {
                bytes: Bytes::new(asset.bytes.clone()),
                source: OnceLock::new(),
            };
            // Two files at one path would make the document depend on the
            // order of `assets`; that is a bug in whoever assembled them.
            if files.insert(id, slot).is_some() {
                return Err(TypesetError::plain(format!(
                    "two files given for path {}",
                    id.vpath().get_with_slash()
                )));
            }
        }

        Ok(Self {
            typesetter,
            main: main_id,
            files,
            today,
        })
    }

    fn slot(&self, id: FileId) -> FileResult<&FileSlot> {
        if let VirtualRoot::Package(spec) = id.root() {
            // Packages would need the network or a local cache; neither is
            // part of a reproducible build.
            return Err(FileError::Package(PackageError::NotFound(spec.clone())));
        }
        self.files
            .get(&id)
            .ok_or_else(|| FileError::NotFound(id.vpath().get_with_slash().into()))
    }
}

impl World for DocumentWorld<'_> {
    fn library(&self) -> &LazyHash<Library> {
        &self.typesetter.library
    }

    fn book(&self) -> &LazyHash<FontBook> {
        self.typesetter.fonts.book()
    }

    fn main(&self) -> FileId {
        self.main
    }

    fn source(&self, id: FileId) -> FileResult<Source> {
        let slot = self.slot(id)?;
        slot.source
            .get_or_init(|| {
                let text = slot.bytes.as_str().map_err(|_| FileError::InvalidUtf8)?;
                Ok(Source::new(id, text.to_owned()))
            })
            .clone()
    }

    fn file(&self, id: FileId) -> FileResult<Bytes> {
        Ok(self.slot(id)?.bytes.clone())
    }

    fn font(&self, index: usize) -> Option<Font> {
        self.typesetter.fonts.font(index)
    }

    fn today(&self, _offset: Option<Duration>) -> Option<Datetime> {
        // The document date stands for "today" whatever the offset: a report
        // rebuilt tomorrow, or in another time zone, must come out identical.
        Some(self.today)
    }
}

/// Renders errors (and any warnings passed along) for humans.
fn render_all<'d>(
    world: &DocumentWorld,
    diagnostics: impl IntoIterator<Item = &'d SourceDiagnostic>,
) -> TypesetError {
    TypesetError {
        diagnostics: diagnostics.into_iter().map(|d| render(world, d)).collect(),
    }
}

/// A position in a file, resolved for display.
struct Place {
    /// `path:line:column`, 1-based.
    label: String,
    /// The text of the line the position is on.
    line_text: String,
}

/// Resolves a diagnostic span to a file position, if it points into a file.
fn locate(world: &DocumentWorld, span: DiagSpan) -> Option<Place> {
    let id = span.id()?;
    let path = match id.root() {
        VirtualRoot::Project => id.vpath().get_with_slash().to_owned(),
        VirtualRoot::Package(spec) => format!("{spec}{}", id.vpath().get_with_slash()),
    };
    let Some(range) = world.range(span) else {
        return Some(Place {
            label: path,
            line_text: String::new(),
        });
    };
    // Line tables are built from the raw bytes so that positions inside
    // non-typst text files (an SVG that fails to parse, say) resolve too.
    let lines: Lines<String> = world.file(id).ok()?.lines().ok()?;
    let Some((line, column)) = lines.byte_to_line_column(range.start) else {
        return Some(Place {
            label: path,
            line_text: String::new(),
        });
    };
    let line_text = lines
        .line_to_range(line)
        .and_then(|r| lines.text().get(r))
        .map(|text| text.trim_end().to_owned())
        .unwrap_or_default();
    Some(Place {
        label: format!("{path}:{}:{}", line + 1, column + 1),
        line_text,
    })
}

fn render(world: &DocumentWorld, diagnostic: &SourceDiagnostic) -> String {
    let severity = match diagnostic.severity {
        Severity::Error => "error",
        Severity::Warning => "warning",
    };
    let mut out = match locate(world, diagnostic.span) {
        Some(place) => {
            let mut head = format!("{severity}: {}: {}", place.label, diagnostic.message);
            if !place.line_text.is_empty() {
                head.push_str(&format!("\n    | {}", place.line_text));
            }
            head
        }
        None => format!("{severity}: {}", diagnostic.message),
    };
    for hint in &diagnostic.hints {
        out.push_str(&format!("\n  hint: {}", hint.v));
        if let Some(place) = locate(world, hint.span) {
            out.push_str(&format!(" (at {})", place.label));
        }
    }
    for point in &diagnostic.trace {
        out.push_str(&format!("\n  trace: {}", point.v));
        if let Some(place) = locate(world, point.span.into()) {
            out.push_str(&format!(" (at {})", place.label));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::Instant;

    const DATE: (i32, u8, u8) = (2024, 5, 17);

    /// A two-colour bar with a line over it: no text, so no font lookup.
    const SVG: &str = r##"<svg xmlns="http://www.w3.org/2000/svg" width="40" height="20" viewBox="0 0 40 20">
<rect x="1" y="1" width="38" height="18" fill="#3366cc"/>
<path d="M2 18 L20 2 L38 18" stroke="#000000" fill="none"/>
</svg>"##;

    fn svg_asset(path: &str) -> Asset {
        Asset {
            path: path.to_owned(),
            bytes: SVG.as_bytes().to_vec(),
        }
    }

    /// Text, math, a table, an imported style module and an SVG, split over
    /// two pages by a forced page break.
    const DOC: &str = r#"#import "/style.typ": accent
#set document(title: "Resonant tank")
= Resonant tank
The tank resonates at
$ f_0 = 1/(2 pi sqrt(L C)) $
#table(
  columns: 2,
  [*Quantity*], [*Value*],
  [$L$], [#text(fill: accent)[47 µH]],
  [$C$], [220 nF],
)
#pagebreak()
= Bode plot
#image("/plots/bode.svg", width: 6cm)
"#;

    fn doc_assets() -> Vec<Asset> {
        vec![
            Asset {
                path: "/style.typ".into(),
                bytes: b"#let accent = rgb(\"#aa3311\")\n".to_vec(),
            },
            svg_asset("/plots/bode.svg"),
        ]
    }

    fn compile(main: &str, assets: &[Asset]) -> Result<Pdf, TypesetError> {
        Typesetter::shared().compile(main, assets, DATE, "bridgebook-test")
    }

    fn contains(haystack: &[u8], needle: &[u8]) -> bool {
        haystack.windows(needle.len()).any(|w| w == needle)
    }

    #[test]
    fn document_with_math_table_and_svg_compiles_to_pdf() {
        let pdf = compile(DOC, &doc_assets()).expect("document typesets");
        assert!(pdf.bytes.starts_with(b"%PDF-"), "not a PDF header");
        assert!(contains(&pdf.bytes, b"%%EOF"), "no PDF trailer");
        assert_eq!(pdf.pages, 2, "one forced page break makes two pages");
        // The page tree written into the file must agree with the reported count.
        assert!(
            contains(&pdf.bytes, b"/Count 2"),
            "page tree does not hold two pages"
        );

        // The picture itself must reach the PDF: a recoloured SVG at the same
        // path and size changes the bytes.
        let mut assets = doc_assets();
        assets[1].bytes = SVG.replace("#3366cc", "#cc6633").into_bytes();
        let recoloured = compile(DOC, &assets).unwrap();
        assert_eq!(recoloured.pages, 2);
        assert_ne!(
            recoloured.bytes, pdf.bytes,
            "SVG content does not reach the PDF"
        );
    }

    #[test]
    fn same_input_gives_identical_bytes() {
        let first = compile(DOC, &doc_assets()).unwrap();
        let second = compile(DOC, &doc_assets()).unwrap();
        assert_eq!(first.bytes, second.bytes);
    }

    #[test]
    fn date_and_ident_reach_the_pdf() {
        let base = compile(DOC, &doc_assets()).unwrap();
        let other_date = Typesetter::shared()
            .compile(DOC, &doc_assets(), (2025, 1, 2), "bridgebook-test")
            .unwrap();
        let other_ident = Typesetter::shared()
            .compile(DOC, &doc_assets(), DATE, "another-document")
            .unwrap();
        assert_ne!(base.bytes, other_date.bytes, "date does not change the PDF");
        assert_ne!(
            base.bytes, other_ident.bytes,
            "ident does not change the PDF"
        );
        assert!(
            contains(&base.bytes, b"D:20240517"),
            "creation date is not the document date"
        );
        assert!(contains(&other_date.bytes, b"D:20250102"));
    }

    #[test]
    fn today_is_the_document_date() {
        let main = "#assert.eq(datetime.today(), datetime(year: 2024, month: 5, day: 17))\nok";
        compile(main, &[]).expect("today() should be the document date");
        let err = Typesetter::shared()
            .compile(main, &[], (2023, 1, 1), "x")
            .unwrap_err();
        assert!(err.to_string().contains("/main.typ:1:"), "{err}");
    }

    #[test]
    fn invalid_date_is_an_error() {
        let err = Typesetter::shared()
            .compile("hi", &[], (2024, 2, 30), "x")
            .unwrap_err();
        assert!(err.to_string().contains("2024-02-30"), "{err}");
    }

    #[test]
    fn changed_asset_content_is_picked_up_at_the_same_path() {
        // Same paths, different texts: a stale cached module would give the
        // old page count.
        let main = "#import \"/count.typ\": n\n#for i in range(n) [Page #i #pagebreak(weak: true)]";
        let with = |n: u32| {
            let asset = Asset {
                path: "/count.typ".into(),
                bytes: format!("#let n = {n}\n").into_bytes(),
            };
            compile(main, &[asset]).unwrap().pages
        };
        assert_eq!(with(1), 1);
        assert_eq!(with(3), 3);
        assert_eq!(with(2), 2);
    }

    #[test]
    fn syntax_error_names_the_line() {
        let main = "= Title\n\nSome text\n#let x = (1, 2\nmore\n";
        let err = compile(main, &[]).unwrap_err();
        let text = err.to_string();
        assert!(text.starts_with("error: /main.typ:4:"), "{text}");
        assert!(
            text.contains("#let x = (1, 2"),
            "offending line not quoted: {text}"
        );
    }

    #[test]
    fn errors_inside_assets_name_the_asset_and_the_call() {
        let style = "#let boom() = {\n  panic(\"bad style\")\n}\n";
        let assets = [Asset {
            path: "/style.typ".into(),
            bytes: style.as_bytes().to_vec(),
        }];
        let err = compile("#import \"/style.typ\": boom\n#boom()\n", &assets).unwrap_err();
        let text = err.to_string();
        assert!(text.contains("/style.typ:2:"), "{text}");
        assert!(text.contains("bad style"), "{text}");
        assert!(
            text.contains("(at /main.typ:2:"),
            "call site missing from trace: {text}"
        );
    }

    #[test]
    fn missing_image_is_an_error() {
        let err = compile(
            "#image(\"/plots/missing.svg\")\n",
            &[svg_asset("/plots/bode.svg")],
        )
        .unwrap_err();
        let text = err.to_string();
        assert!(text.contains("/main.typ:1:"), "{text}");
        assert!(text.contains("/plots/missing.svg"), "{text}");
    }

    #[test]
    fn filesystem_and_packages_are_out_of_reach() {
        // This source file certainly exists on disk; it must not be readable.
        let err = compile("#read(\"/src/report/typeset.rs\")\n", &[]).unwrap_err();
        assert!(err.to_string().contains("file not found"), "{err}");
        let err = compile("#import \"@preview/cetz:0.3.0\"\n", &[]).unwrap_err();
        assert!(err.to_string().contains("/main.typ:1:"), "{err}");
    }

    #[test]
    fn bad_asset_lists_are_rejected() {
        let twice = [svg_asset("/a.svg"), svg_asset("/./a.svg")];
        let err = compile("x", &twice).unwrap_err();
        assert!(
            err.to_string().contains("two files given for path /a.svg"),
            "{err}"
        );
        let err = compile("x", &[svg_asset("/main.typ")]).unwrap_err();
        assert!(err.to_string().contains("/main.typ"), "{err}");
        let err = compile("x", &[svg_asset("/../escape.svg")]).unwrap_err();
        assert!(err.to_string().contains("escape"), "{err}");
    }

    /// A document of about five pages, for timing a rebuild.
    fn five_page_document() -> String {
        let mut doc = String::from("#set page(paper: \"a4\")\n#set par(justify: true)\n");
        for section in 1..=5 {
            doc.push_str(&format!("= Section {section}\n"));
            for para in 0..6 {
                doc.push_str(&format!(
                    "Paragraph {para} of section {section}: the bridge leg switches at \
                     $f_s = {} \"kHz\"$ and the ripple current follows from \
                     $Delta i = V_(d c) / (4 L f_s)$. {}\n\n",
                    16 + section,
                    "Dead time, conduction loss and switching loss are traced to inputs. "
                        .repeat(4)
                ));
            }
            doc.push_str("#table(columns: 3, [Item], [Value], [Unit], ");
            for row in 0..8 {
                doc.push_str(&format!("[r{row}], [{}.{row}], [A], ", row * 3));
            }
            doc.push_str(")\n#image(\"/plots/bode.svg\", width: 8cm)\n#pagebreak(weak: true)\n");
        }
        doc
    }

    #[test]
    fn rebuild_of_five_page_document_is_timed() {
        let doc = five_page_document();
        let assets = [svg_asset("/plots/bode.svg")];
        let start = Instant::now();
        let first = compile(&doc, &assets).unwrap();
        let cold = start.elapsed();
        let start = Instant::now();
        let second = compile(&doc, &assets).unwrap();
        let warm = start.elapsed();
        // A package rebuilt with one changed input is the common case in a
        // benchmark run; it must still typeset, and differently.
        let changed = doc.replacen("Section 3", "Section three", 1);
        let start = Instant::now();
        let third = compile(&changed, &assets).unwrap();
        let edited = start.elapsed();
        assert_eq!(first.pages, 5);
        assert_eq!(first.bytes, second.bytes);
        assert_eq!(third.pages, 5);
        assert_ne!(third.bytes, first.bytes);
        println!(
            "five-page document: first compile {cold:?}, identical rebuild {warm:?}, \
             rebuild with one heading changed {edited:?}"
        );
    }
}
