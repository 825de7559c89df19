//! Reads back the files a package PDF carries (the canonical record and `results.json`,
//! attached as PDF/A-3 associated files), so that one PDF is enough to diff or re-check
//! a package. This reads the PDFs bridgebook writes: each attachment an embedded-file
//! stream with a direct `/Length`, Flate-compressed or plain. It is not a general PDF
//! parser.

use flate2::read::ZlibDecoder;
use std::io::Read;

/// The JSON documents embedded in `pdf`, in the order they appear.
pub fn embedded_json(pdf: &[u8]) -> Result<Vec<serde_json::Value>, String> {
    let mut out = Vec::new();
    let mut from = 0;
    while let Some(at) = find(&pdf[from..], b"/Type/EmbeddedFile") {
        let at = from + at;
        from = at + 1;
        // The stream's dictionary: back to its "<<", forward to the "stream" keyword.
        let start = rfind(&pdf[..at], b"obj").ok_or("an embedded file without its object")?;
        let dict_end =
            find(&pdf[at..], b"stream").ok_or("an embedded file without its stream")? + at;
        let dict = &pdf[start..dict_end];
        let length =
            number_after(dict, b"/Length").ok_or("an embedded file without a direct /Length")?;
        let mut data_start = dict_end + b"stream".len();
        if pdf.get(data_start) == Some(&b'\r') {
            data_start += 1;
        }
        if pdf.get(data_start) == Some(&b'\n') {
            data_start += 1;
        }
        let data = pdf
            .get(data_start..data_start + length)
            .ok_or("an embedded file runs past the end of the PDF")?;
        let bytes = if find(dict, b"/FlateDecode").is_some() {
            let mut v = Vec::new();
            ZlibDecoder::new(data)
                .read_to_end(&mut v)
                .map_err(|e| format!("an embedded file cannot be decompressed: {e}"))?;
            v
        } else {
            data.to_vec()
        };
        if let Ok(doc) = serde_json::from_slice::<serde_json::Value>(&bytes) {
            out.push(doc);
        }
    }
    Ok(out)
}

/// The record and the results a package PDF carries.
pub fn record_and_results(pdf: &[u8]) -> Result<(serde_json::Value, serde_json::Value), String> {
    let docs = embedded_json(pdf)?;
    let results = docs
        .iter()
        .find(|d| d.get("quantities").is_some() && d.get("stamp").is_some())
        .cloned()
        .ok_or("the PDF carries no results.json: it was not written by bridgebook, or by a version before attachments")?;
    let record = docs
        .iter()
        .find(|d| d.get("bridgebook").is_some() && d.get("project").is_some())
        .cloned()
        .or_else(|| results.get("design").cloned())
        .ok_or("the PDF carries no design record")?;
    Ok((record, results))
}

fn find(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).position(|w| w == needle)
}

fn rfind(hay: &[u8], needle: &[u8]) -> Option<usize> {
    hay.windows(needle.len()).rposition(|w| w == needle)
}

fn number_after(dict: &[u8], key: &[u8]) -> Option<usize> {
    let at = find(dict, key)? + key.len();
    let digits: String = dict[at..]
        .iter()
        .skip_while(|c| c.is_ascii_whitespace())
        .take_while(|c| c.is_ascii_digit())
        .map(|&c| c as char)
        .collect();
    digits.parse().ok()
}
