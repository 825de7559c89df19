//! The package document: Markdown templates and the sheet to typst source, SVG plots,
//! and the PDF typeset in memory with embedded fonts.
//!
//! - [`template`]: Markdown with `@place` and `@{...}` directives to typst markup.
//! - [`sections`]: what each directive produces (tables, calculation entries, cautions).
//! - [`plot`]: plotters SVG figures; [`figures`] computes their data from the sheet.
//! - [`power_figures`]: efficiency, loss and junction-temperature figures;
//!   [`bar_plot`] draws the loss bars.
//! - [`typeset`]: the in-memory typst world and PDF export.

pub mod bar_plot;
pub mod figures;
pub mod findings;
pub mod markup;
pub mod plot;
pub mod power_figures;
pub mod sections;
pub mod spectrum_figures;
pub mod spectrum_plot;
pub mod template;
pub mod typeset;

use crate::diag::{Diagnostic, Diagnostics, SourceText};
use crate::package::Stamp;
use crate::record::Record;
use crate::sheet::Sheet;
use std::collections::BTreeSet;
use std::path::Path;

/// The template files a package is rendered with: `package.md` and `style.typ`.
#[derive(Clone, Debug)]
pub struct Templates {
    /// Where they came from, for messages: a folder, or "built-in".
    pub origin: String,
    /// File name and contents, sorted by name.
    pub files: Vec<(String, Vec<u8>)>,
}

/// The template files every templates folder must have.
pub const REQUIRED: [&str; 2] = ["package.md", "style.typ"];

impl Templates {
    /// The templates shipped in the binary (the project's `templates/` folder).
    pub fn builtin() -> Templates {
        Templates {
            origin: "built-in templates".to_string(),
            files: vec![
                (
                    "package.md".to_string(),
                    include_bytes!("../../templates/package.md").to_vec(),
                ),
                (
                    "style.typ".to_string(),
                    include_bytes!("../../templates/style.typ").to_vec(),
                ),
            ],
        }
    }

    /// Reads `package.md` and `style.typ` from a folder (a copy of `templates/`).
    pub fn from_dir(dir: &Path) -> Result<Templates, Diagnostics> {
        let mut files = Vec::new();
        let mut errors = Vec::new();
        for name in REQUIRED {
            let path = dir.join(name);
            match std::fs::read(&path) {
                Ok(bytes) => files.push((name.to_string(), bytes)),
                Err(e) => errors.push(Diagnostic {
                    file: path.display().to_string(),
                    line: 0,
                    column: 1,
                    key: String::new(),
                    message: format!("cannot read template `{name}`: {e}"),
                    hint: Some(
                        "a templates folder holds `package.md` and `style.typ`; copy `templates/` to start"
                            .into(),
                    ),
                    snippet: None,
                    width: 1,
                }),
            }
        }
        if !errors.is_empty() {
            return Err(Diagnostics(errors));
        }
        Ok(Templates {
            origin: dir.display().to_string(),
            files,
        })
    }

    fn get(&self, name: &str) -> &[u8] {
        self.files
            .iter()
            .find(|(n, _)| n == name)
            .map_or(&[][..], |(_, b)| b.as_slice())
    }

    fn path_of(&self, name: &str) -> String {
        if self.origin == "built-in templates" {
            format!("templates/{name}")
        } else {
            Path::new(&self.origin).join(name).display().to_string()
        }
    }
}

/// A rendered package document.
pub struct Rendered {
    pub pdf: Vec<u8>,
    pub pages: usize,
    /// Plot files written beside the PDF: file name and SVG text.
    pub plots: Vec<(String, String)>,
    /// The generated typst source, for inspection.
    pub typst: String,
}

#[derive(Debug)]
pub enum RenderError {
    /// A template or the record's Markdown is wrong.
    Input(Diagnostics),
    /// typst rejected the generated source.
    Typeset(String),
}

/// Renders the package document of an evaluated record.
pub fn render(
    record: &Record,
    sheet: &Sheet,
    stamp: &Stamp,
    templates: &Templates,
) -> Result<Rendered, RenderError> {
    render_attached(record, sheet, stamp, templates, &[])
}

/// A file attached to the PDF: its name (also its path under `/attachments/`), what
/// it is, and its bytes.
pub struct Attachment {
    pub name: String,
    pub description: String,
    pub bytes: Vec<u8>,
}

/// As [`render`], with files attached to the PDF (PDF/A-3 associated files).
pub fn render_attached(
    record: &Record,
    sheet: &Sheet,
    stamp: &Stamp,
    templates: &Templates,
    attachments: &[Attachment],
) -> Result<Rendered, RenderError> {
    let design = &record.design;
    let figures = figures::all(design, sheet).map_err(|e| {
        RenderError::Typeset(format!("internal error: a plot could not be drawn: {e}"))
    })?;
    let plot_refs: Vec<sections::PlotRef> = figures
        .iter()
        .map(|f| sections::PlotRef {
            name: f.name,
            caption: f.caption.clone(),
            asset: format!("/plots/{}.svg", f.name),
        })
        .collect();

    let template_name = templates.path_of("package.md");
    let template_text = String::from_utf8_lossy(templates.get("package.md")).to_string();
    let template_src = SourceText {
        name: template_name,
        text: template_text.clone(),
    };
    let mut ctx = sections::Context {
        design,
        sheet,
        stamp,
        plots: &plot_refs,
        record: &record.source,
        placed: BTreeSet::new(),
        record_errors: Vec::new(),
    };
    let origin = template::Origin {
        source: &template_src,
        first_line: 1,
        indent: 0,
        key: "",
    };
    let body = template::to_typst(&template_text, &origin, &mut ctx);
    let tail = ctx.mandatory_tail();
    let mut errors = std::mem::take(&mut ctx.record_errors);
    let body = match body {
        Ok(b) => b,
        Err(mut e) => {
            errors.append(&mut e);
            String::new()
        }
    };
    if !errors.is_empty() {
        return Err(RenderError::Input(Diagnostics(errors)));
    }
    let tail = tail.map_err(|(m, _)| RenderError::Typeset(format!("internal error: {m}")))?;

    let p = &design.project;
    // Attachments at fixed paths (typst interns file ids for the process's life).
    let attach: String = attachments
        .iter()
        .map(|a| {
            format!(
                "#pdf.attach({}, relationship: \"source\", mime-type: \"application/json\", description: {})\n",
                markup::string(&format!("/attachments/{}", a.name)),
                markup::string(&a.description)
            )
        })
        .collect();
    let main = format!(
        "#import \"/style.typ\": *\n#show: package.with(id: {}, title: {}, revision: {}, date: {}, failing: {})\n{attach}\n{body}{tail}\n",
        markup::string(&p.id),
        markup::string(&p.title),
        markup::string(&p.revision),
        markup::string(&p.date.to_string()),
        !sheet.all_pass(),
    );
    let mut assets = vec![typeset::Asset {
        path: "/style.typ".to_string(),
        bytes: templates.get("style.typ").to_vec(),
    }];
    for a in attachments {
        assets.push(typeset::Asset {
            path: format!("/attachments/{}", a.name),
            bytes: a.bytes.clone(),
        });
    }
    for (f, r) in figures.iter().zip(&plot_refs) {
        assets.push(typeset::Asset {
            path: r.asset.clone(),
            bytes: f.svg.clone().into_bytes(),
        });
    }
    let ident = format!("{}/{}/{}", p.id, p.revision, &stamp.record_sha256[..16]);
    let pdf = typeset::Typesetter::shared()
        .compile(
            &main,
            &assets,
            (p.date.year, p.date.month, p.date.day),
            &ident,
        )
        .map_err(|e| RenderError::Typeset(e.to_string()))?;
    Ok(Rendered {
        pdf: pdf.bytes,
        pages: pdf.pages,
        plots: figures
            .into_iter()
            .map(|f| (format!("{}.svg", f.name), f.svg))
            .collect(),
        typst: main,
    })
}
