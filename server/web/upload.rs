//! Reading a multipart upload: one file and the typed fields beside it, for every page and
//! API route that takes a file (DSC traces, run data).

use axum::extract::{FromRequest, Request};
use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};

use crate::AppError;

/// Most typed fields one upload form sends (anything beyond is refused, not read).
const MAX_FIELDS: usize = 64;

/// A multipart body: the file (if any) and the typed fields, in the order sent.
#[derive(Debug, Default)]
pub struct Upload {
    pub file_name: String,
    pub bytes: Vec<u8>,
    pub fields: Vec<(String, String)>,
}

impl Upload {
    /// The last value sent for `name` ("" when none).
    pub fn text(&self, name: &str) -> String {
        self.fields
            .iter()
            .rev()
            .find(|(n, _)| n == name)
            .map(|(_, v)| v.clone())
            .unwrap_or_default()
    }

    /// Every value sent for `name` (check boxes, repeated selects).
    pub fn all(&self, name: &str) -> Vec<String> {
        self.fields
            .iter()
            .filter(|(n, _)| n == name)
            .map(|(_, v)| v.clone())
            .collect()
    }
}

/// Reads a multipart body; the part named `file` is the file.
pub async fn read_upload(req: Request) -> Result<Upload, AppError> {
    let mut mp = axum::extract::Multipart::from_request(req, &())
        .await
        .map_err(|_| {
            AppError::refused(
                StatusCode::UNSUPPORTED_MEDIA_TYPE,
                Some("body"),
                "an upload must be sent as multipart/form-data",
            )
        })?;
    let unreadable = |e: axum::extract::multipart::MultipartError| {
        if e.status() == StatusCode::PAYLOAD_TOO_LARGE {
            super::extract::too_large()
        } else {
            AppError::refused(
                StatusCode::BAD_REQUEST,
                Some("body"),
                "the upload could not be read",
            )
        }
    };
    let mut upload = Upload::default();
    while let Some(field) = mp.next_field().await.map_err(unreadable)? {
        let name = field.name().unwrap_or("").to_string();
        if name == "file" {
            upload.file_name = field.file_name().unwrap_or("").to_string();
            upload.bytes = field.bytes().await.map_err(unreadable)?.to_vec();
            continue;
        }
        if upload.fields.len() >= MAX_FIELDS {
            return Err(AppError::refused(
                StatusCode::BAD_REQUEST,
                Some("body"),
                format!("an upload form sends at most {MAX_FIELDS} fields"),
            ));
        }
        let value = field.text().await.map_err(unreadable)?;
        upload.fields.push((name, value));
    }
    Ok(upload)
}

/// A stored file as a download, byte for byte, under its own name.
pub fn attachment(name: &str, bytes: Vec<u8>) -> Response {
    let mut r = bytes.into_response();
    let h = r.headers_mut();
    h.insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static("application/octet-stream"),
    );
    // An ASCII fallback name and the exact one in RFC 5987 form.
    let ascii: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_graphic() && c != '"' && c != '\\' || c == ' ' {
                c
            } else {
                '_'
            }
        })
        .collect();
    let exact: String = form_urlencoded::byte_serialize(name.as_bytes())
        .collect::<String>()
        .replace('+', "%20");
    if let Ok(v) = HeaderValue::from_str(&format!(
        "attachment; filename=\"{ascii}\"; filename*=UTF-8''{exact}"
    )) {
        h.insert(header::CONTENT_DISPOSITION, v);
    }
    r
}
