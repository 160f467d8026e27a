//! Reads an HTML form the way a browser submits it: every named input, select and text
//! area with its current value, in document order. Small on purpose: it understands the
//! markup our templates write (double-quoted attributes), nothing more.

/// The fields a browser would submit for the first `<form method="post" …>` in `html`
/// (with `action`), as (name, value) pairs in document order.
pub struct PostedForm {
    pub action: String,
    pub fields: Vec<(String, String)>,
}

impl PostedForm {
    pub fn get(&self, name: &str) -> Option<&str> {
        self.fields
            .iter()
            .find(|(k, _)| k == name)
            .map(|(_, v)| v.as_str())
    }

    pub fn pairs(&self) -> Vec<(&str, &str)> {
        self.fields
            .iter()
            .map(|(k, v)| (k.as_str(), v.as_str()))
            .collect()
    }
}

/// The page's first post form in its main content (the header's sign-out form aside).
pub fn post_form_in(html: &str) -> PostedForm {
    let main = html.find("<main>").unwrap_or(0);
    let start = html[main..]
        .find("<form method=\"post\"")
        .map(|s| main + s)
        .unwrap_or_else(|| panic!("no post form in the page: {html}"));
    let end = html[start..]
        .find("</form>")
        .map(|e| start + e)
        .expect("the form is closed");
    let form = &html[start..end];
    let (form_tag, _) = tag_at(form, 0);
    let action = attr(&form_tag, "action").unwrap_or_default();
    let mut fields = Vec::new();
    let mut pos = 0;
    while let Some(offset) = form[pos..].find('<') {
        let at = pos + offset;
        let rest = &form[at..];
        if rest.starts_with("<input") {
            let (tag, after) = tag_at(form, at);
            pos = after;
            let Some(name) = attr(&tag, "name") else {
                continue;
            };
            let kind = attr(&tag, "type").unwrap_or_else(|| "text".into());
            match kind.as_str() {
                "submit" | "button" | "reset" => {}
                "checkbox" | "radio" => {
                    if has_flag(&tag, "checked") {
                        fields.push((name, attr(&tag, "value").unwrap_or_else(|| "on".into())));
                    }
                }
                // A browser strips line breaks from one-line inputs.
                _ => fields.push((
                    name,
                    attr(&tag, "value")
                        .unwrap_or_default()
                        .replace(['\r', '\n'], ""),
                )),
            }
        } else if rest.starts_with("<select") {
            let (tag, after) = tag_at(form, at);
            let close = form[after..].find("</select>").expect("select is closed") + after;
            pos = close;
            let Some(name) = attr(&tag, "name") else {
                continue;
            };
            let mut first = None;
            let mut chosen = None;
            let mut p = after;
            while let Some(o) = form[p..close].find("<option") {
                let (opt, a) = tag_at(form, p + o);
                let text_end = form[a..close].find('<').map(|e| a + e).unwrap_or(close);
                let value =
                    attr(&opt, "value").unwrap_or_else(|| unescape(form[a..text_end].trim()));
                if first.is_none() {
                    first = Some(value.clone());
                }
                if has_flag(&opt, "selected") && chosen.is_none() {
                    chosen = Some(value);
                }
                p = a;
            }
            if let Some(v) = chosen.or(first) {
                fields.push((name, v));
            }
        } else if rest.starts_with("<textarea") {
            let (tag, after) = tag_at(form, at);
            let close = form[after..]
                .find("</textarea>")
                .expect("textarea is closed")
                + after;
            pos = close;
            let Some(name) = attr(&tag, "name") else {
                continue;
            };
            let raw = unescape(&form[after..close]);
            // The HTML parser drops one newline right after <textarea>; a browser submits
            // line breaks as CRLF.
            let raw = raw.strip_prefix('\n').unwrap_or(&raw).to_string();
            fields.push((name, raw.replace("\r\n", "\n").replace('\n', "\r\n")));
        } else {
            pos = at + 1;
        }
    }
    PostedForm { action, fields }
}

/// The tag starting at `at` (up to its `>`, outside quotes) and the index after it.
fn tag_at(html: &str, at: usize) -> (String, usize) {
    let mut quoted = false;
    for (i, c) in html[at..].char_indices() {
        match c {
            '"' => quoted = !quoted,
            '>' if !quoted => return (html[at..at + i + 1].to_string(), at + i + 1),
            _ => {}
        }
    }
    panic!("unclosed tag at {at}");
}

/// The unescaped value of a double-quoted attribute.
fn attr(tag: &str, name: &str) -> Option<String> {
    let needle = format!(" {name}=\"");
    let start = tag.find(&needle)? + needle.len();
    let end = tag[start..].find('"')? + start;
    Some(unescape(&tag[start..end]))
}

/// Whether a boolean attribute (`selected`, `checked`) is present outside quoted values.
fn has_flag(tag: &str, flag: &str) -> bool {
    let mut outside = String::new();
    let mut quoted = false;
    for c in tag.chars() {
        if c == '"' {
            quoted = !quoted;
            outside.push(' ');
        } else if !quoted {
            outside.push(c);
        }
    }
    outside
        .split(|c: char| c.is_whitespace() || c == '>' || c == '/')
        .any(|w| w == flag)
}

fn unescape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    let mut rest = s;
    while let Some(i) = rest.find('&') {
        out.push_str(&rest[..i]);
        rest = &rest[i..];
        let Some(end) = rest.find(';') else { break };
        let entity = &rest[1..end];
        let decoded = match entity {
            "amp" => Some('&'),
            "lt" => Some('<'),
            "gt" => Some('>'),
            "quot" => Some('"'),
            "apos" => Some('\''),
            _ => entity
                .strip_prefix("#x")
                .or_else(|| entity.strip_prefix("#X"))
                .and_then(|h| u32::from_str_radix(h, 16).ok())
                .or_else(|| entity.strip_prefix('#').and_then(|d| d.parse().ok()))
                .and_then(char::from_u32),
        };
        match decoded {
            Some(c) => {
                out.push(c);
                rest = &rest[end + 1..];
            }
            None => {
                out.push('&');
                rest = &rest[1..];
            }
        }
    }
    out.push_str(rest);
    out
}

#[test]
fn the_form_reader_takes_selected_options_checked_boxes_and_text_areas() {
    let html = r#"<form method="post" action="/x/1" class="record">
      <input type="hidden" name="version" value="3">
      <input name="name" value="a &amp; &quot;b&quot; &#39;c&#39;">
      <select name="unit"><option value="mg">mg</option><option value="pct" selected>%</option></select>
      <select name="none"><option value="first">1</option><option value="second">2</option></select>
      <input type="checkbox" name="off" value="on">
      <input type="checkbox" name="on" value="on" checked>
      <textarea name="notes" rows="3">line 1
line &lt;2&gt;</textarea>
      <button type="submit">Save</button></form>"#;
    let f = post_form_in(html);
    assert_eq!(f.action, "/x/1");
    assert_eq!(f.get("version"), Some("3"));
    assert_eq!(f.get("name"), Some("a & \"b\" 'c'"));
    assert_eq!(f.get("unit"), Some("pct"));
    assert_eq!(f.get("none"), Some("first"));
    assert_eq!(f.get("off"), None);
    assert_eq!(f.get("on"), Some("on"));
    assert_eq!(f.get("notes"), Some("line 1\r\nline <2>"));
}

#[test]
fn a_dryer_capability_text_area_posts_back_every_point_exactly() {
    // The capability is one point per line; a browser sends the text area with \r\n.
    let html = r#"<form method="post" action="/dryers/1" class="record">
      <textarea name="capability" rows="6">33.3333 0.30000000000000004
100 0.3333333333333333</textarea>
      <button type="submit">Save</button></form>"#;
    let f = post_form_in(html);
    let posted = f.get("capability").unwrap();
    assert!(posted.contains("\r\n"));
    let form = glasspoint::domain::DryerForm {
        name: "d".into(),
        shelf_area_m2: "1".into(),
        shelf_area_source: "s".into(),
        capability: posted.to_string(),
        capability_source: "s".into(),
        ..Default::default()
    };
    let d = form.parse().unwrap();
    let points: Vec<(f64, f64)> = d
        .capability
        .iter()
        .map(|p| (p.pressure_mtorr, p.max_sublimation_kg_h))
        .collect();
    assert_eq!(
        points
            .iter()
            .map(|p| (p.0.to_bits(), p.1.to_bits()))
            .collect::<Vec<_>>(),
        [(33.3333f64, 0.1 + 0.2), (100.0, 1.0 / 3.0)]
            .iter()
            .map(|p: &(f64, f64)| (p.0.to_bits(), p.1.to_bits()))
            .collect::<Vec<_>>()
    );
}
