//! Sign-off: ed25519 keys, signatures over a package's manifest, and their
//! verification. A signature covers the SHA-256 of `manifest.json` (and through it every
//! file of the package) together with the signer's role, name and date, so none of
//! those can be moved to another package or changed afterwards. Signatures live in
//! `signatures.json` beside the manifest; the PDF is never modified after signing.

use super::manifest::Manifest;
use super::sha256_hex;
use ed25519_dalek::{Signature, Signer, SigningKey, Verifier, VerifyingKey};
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The file of a package's signatures.
pub const SIGNATURES: &str = "signatures.json";
const SIGNATURES_FORMAT: &str = "bridgebook-signatures 1";
const KEY_HEADER: &str = "bridgebook-key 1";
const PUBLIC_HEADER: &str = "bridgebook-public-key 1";

/// The roles a signer can take.
pub const ROLES: [&str; 2] = ["checked", "approved"];

#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct SignatureEntry {
    pub role: String,
    pub name: String,
    pub date: String,
    pub package_id: String,
    pub manifest_sha256: String,
    /// The signer's public key, hex.
    pub public_key: String,
    /// The ed25519 signature of [`message`], hex.
    pub signature: String,
}

#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct Signatures {
    pub format: String,
    pub signatures: Vec<SignatureEntry>,
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

fn unhex<const N: usize>(text: &str) -> Option<[u8; N]> {
    let text = text.trim();
    if text.len() != 2 * N {
        return None;
    }
    let mut out = [0u8; N];
    for (i, o) in out.iter_mut().enumerate() {
        *o = u8::from_str_radix(text.get(2 * i..2 * i + 2)?, 16).ok()?;
    }
    Some(out)
}

/// What is signed: one line of text naming everything the signature vouches for.
pub fn message(e: &SignatureEntry) -> Vec<u8> {
    format!(
        "bridgebook sign-off 1|manifest {}|package {}|role {}|name {}|date {}",
        e.manifest_sha256, e.package_id, e.role, e.name, e.date
    )
    .into_bytes()
}

/// A new key pair; returns the private key file's text and the public key's.
pub fn new_key_files() -> (String, String) {
    let key = SigningKey::generate(&mut rand_core::OsRng);
    let public = hex(key.verifying_key().as_bytes());
    (
        format!(
            "{KEY_HEADER}\ned25519-secret {}\ned25519-public {public}\n",
            hex(&key.to_bytes())
        ),
        public_key_text(&public),
    )
}

/// The text of a public key file.
pub fn public_key_text(public_hex: &str) -> String {
    format!("{PUBLIC_HEADER}\ned25519-public {public_hex}\n")
}

fn field<'t>(text: &'t str, name: &str) -> Option<&'t str> {
    text.lines()
        .find_map(|l| l.strip_prefix(name).map(str::trim))
}

/// Reads a private key file.
pub fn read_signing_key(path: &Path) -> Result<SigningKey, String> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| format!("cannot read the key `{}`: {e}", path.display()))?;
    if text.lines().next() != Some(KEY_HEADER) {
        return Err(format!(
            "`{}` is not a bridgebook private key",
            path.display()
        ));
    }
    let secret = field(&text, "ed25519-secret ")
        .and_then(unhex::<32>)
        .ok_or_else(|| format!("`{}` has no valid `ed25519-secret` line", path.display()))?;
    Ok(SigningKey::from_bytes(&secret))
}

/// A public key from a file (`bridgebook-public-key 1`, or a private key file) or from
/// 64 hex digits given directly.
pub fn read_public_key(arg: &str) -> Result<String, String> {
    if let Some(k) = unhex::<32>(arg) {
        return Ok(hex(&k));
    }
    let text = std::fs::read_to_string(arg)
        .map_err(|e| format!("cannot read the public key `{arg}`: {e}"))?;
    field(&text, "ed25519-public ")
        .and_then(unhex::<32>)
        .map(|k| hex(&k))
        .ok_or_else(|| format!("`{arg}` has no valid `ed25519-public` line"))
}

/// The signatures of a package folder (none if it has no signatures file).
pub fn read(dir: &Path) -> Result<Signatures, String> {
    let path = dir.join(SIGNATURES);
    match std::fs::read(&path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Signatures {
            format: SIGNATURES_FORMAT.to_string(),
            signatures: Vec::new(),
        }),
        Err(e) => Err(format!("cannot read `{}`: {e}", path.display())),
        Ok(bytes) => {
            let s: Signatures = serde_json::from_slice(&bytes).map_err(|e| {
                format!(
                    "`{}` is not a bridgebook signatures file: {e}",
                    path.display()
                )
            })?;
            if s.format != SIGNATURES_FORMAT {
                return Err(format!("`{}` has format `{}`", path.display(), s.format));
            }
            Ok(s)
        }
    }
}

/// Signs the package in `dir` as `role`, refusing a package whose files do not match
/// its manifest. The signatures file is replaced atomically.
pub fn sign(
    dir: &Path,
    key: &SigningKey,
    role: &str,
    name: &str,
    date: &str,
) -> Result<SignatureEntry, String> {
    let (manifest, bytes) = Manifest::read(dir)?;
    let problems = manifest.check_files(dir);
    if !problems.is_empty() {
        return Err(format!(
            "the package does not match its manifest, so it cannot be signed: {}",
            problems.join("; ")
        ));
    }
    let mut entry = SignatureEntry {
        role: role.to_string(),
        name: name.to_string(),
        date: date.to_string(),
        package_id: manifest.package_id.clone(),
        manifest_sha256: sha256_hex(&bytes),
        public_key: hex(key.verifying_key().as_bytes()),
        signature: String::new(),
    };
    entry.signature = hex(&key.sign(&message(&entry)).to_bytes());
    let mut all = read(dir)?;
    if all
        .signatures
        .iter()
        .any(|s| s.public_key == entry.public_key && s.role == entry.role)
    {
        return Err(format!(
            "this key has already signed the package as `{role}`\n  = hint: each key signs a package once per role; another signer uses their own key"
        ));
    }
    all.signatures.push(entry.clone());
    let mut text = serde_json::to_vec_pretty(&all).map_err(|e| e.to_string())?;
    text.push(b'\n');
    super::write_file_atomic(&dir.join(SIGNATURES), &text).map_err(|e| e.to_string())?;
    Ok(entry)
}

/// The verdict on one signature.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Verdict {
    /// Valid, and by a trusted key (or no trust list was given).
    Valid { trusted: bool },
    /// The signature does not verify, or it signs another manifest.
    Invalid(String),
}

/// Checks one signature against the manifest bytes it should cover and a trust list
/// (empty: no trust decision asked).
pub fn check(e: &SignatureEntry, manifest_bytes: &[u8], trusted: &[String]) -> Verdict {
    if e.manifest_sha256 != sha256_hex(manifest_bytes) {
        return Verdict::Invalid("it signs a different manifest".into());
    }
    let Some(key) = unhex::<32>(&e.public_key).and_then(|k| VerifyingKey::from_bytes(&k).ok())
    else {
        return Verdict::Invalid("its public key is malformed".into());
    };
    let Some(sig) = unhex::<64>(&e.signature).map(|s| Signature::from_bytes(&s)) else {
        return Verdict::Invalid("the signature is malformed".into());
    };
    match key.verify(&message(e), &sig) {
        Ok(()) => Verdict::Valid {
            trusted: trusted.is_empty() || trusted.iter().any(|t| t == &e.public_key),
        },
        Err(_) => Verdict::Invalid(
            "the signature does not verify: the signed fields or the signature were changed".into(),
        ),
    }
}

/// Today's date (UTC) as YYYY-MM-DD, for a signature or a log line: the civil date of
/// the days since 1970-01-01 (H. Hinnant's days-from-civil inverse, common practice).
pub fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    civil_date((secs / 86_400) as i64)
}

pub fn civil_date(days: i64) -> String {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = if m <= 2 { y + 1 } else { y };
    format!("{y:04}-{m:02}-{d:02}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ed25519_matches_the_rfc_8032_test_vector() {
        // RFC 8032, section 7.1, TEST 1: the empty message.
        let secret =
            unhex::<32>("9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60")
                .unwrap();
        let key = SigningKey::from_bytes(&secret);
        assert_eq!(
            hex(key.verifying_key().as_bytes()),
            "d75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a"
        );
        assert_eq!(
            hex(&key.sign(b"").to_bytes()),
            "e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b"
        );
    }

    #[test]
    fn civil_dates() {
        // Unix epoch day 0 is 1970-01-01; day 20 818 is 2026-12-31 (days-from-civil,
        // H. Hinnant; common practice); 2000-02-29 is day 11 016.
        assert_eq!(civil_date(0), "1970-01-01");
        assert_eq!(civil_date(11_016), "2000-02-29");
        assert_eq!(civil_date(20_818), "2026-12-31");
    }

    #[test]
    fn a_changed_field_breaks_the_signature() {
        let key = SigningKey::from_bytes(&[7u8; 32]);
        let manifest = b"{}";
        let mut e = SignatureEntry {
            role: "checked".into(),
            name: "C. Checker".into(),
            date: "2026-12-01".into(),
            package_id: "0000-0000-0000-0000-0000".into(),
            manifest_sha256: sha256_hex(manifest),
            public_key: hex(key.verifying_key().as_bytes()),
            signature: String::new(),
        };
        e.signature = hex(&key.sign(&message(&e)).to_bytes());
        assert_eq!(check(&e, manifest, &[]), Verdict::Valid { trusted: true });
        assert_eq!(
            check(&e, manifest, &["ab".repeat(32)]),
            Verdict::Valid { trusted: false }
        );
        let mut forged = e.clone();
        forged.role = "approved".into();
        assert!(matches!(check(&forged, manifest, &[]), Verdict::Invalid(_)));
        assert!(matches!(check(&e, b"{ }", &[]), Verdict::Invalid(_)));
    }
}
