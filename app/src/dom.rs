//! A tiny, non-generic DOM builder for the read-only parts of the design view.
//!
//! Those parts are rebuilt wholesale whenever the engine returns a new design and hold no
//! event handler, so typed Leptos views buy nothing there but code size (measured: about
//! 30 KB of the compressed bundle). Text always goes in as text nodes, so it is never read
//! as markup; [`Node::svg`] is only for SVG the engine wrote and escaped itself.

use wasm_bindgen::JsCast;

/// An element under construction; every call is a no-op when the element could not be made.
pub struct Node(Option<web_sys::Element>);

/// A new element named `tag` (a fixed HTML tag name).
pub fn el(tag: &str) -> Node {
    Node(leptos::prelude::document().create_element(tag).ok())
}

/// A new element with a class attribute.
pub fn el_c(tag: &str, class: &str) -> Node {
    el(tag).attr("class", class)
}

impl Node {
    pub fn attr(self, name: &str, value: &str) -> Node {
        if let Some(e) = &self.0 {
            let _ = e.set_attribute(name, value);
        }
        self
    }

    /// Appends `text` as a text node.
    pub fn text(self, text: &str) -> Node {
        if let Some(e) = &self.0 {
            let _ = e.append_with_str_1(text);
        }
        self
    }

    pub fn child(self, child: Node) -> Node {
        if let (Some(e), Some(c)) = (&self.0, child.0) {
            let _ = e.append_with_node_1(&c);
        }
        self
    }

    pub fn children(mut self, children: impl IntoIterator<Item = Node>) -> Node {
        for c in children {
            self = self.child(c);
        }
        self
    }

    /// Inserts an SVG drawing produced by the engine (which escapes every text in it).
    pub fn svg(self, engine_svg: &str) -> Node {
        if let Some(e) = &self.0 {
            e.set_inner_html(engine_svg);
        }
        self
    }

    /// Replaces everything inside `host` with this element.
    pub fn replace_contents_of(self, host: &web_sys::Element) {
        host.set_text_content(None);
        if let Some(e) = self.0 {
            let _ = host.append_with_node_1(e.unchecked_ref());
        }
    }
}

/// A `<th>`/`<td>` row of texts.
pub fn row(cells: &[(&str, &str)]) -> Node {
    el("tr").children(cells.iter().map(|(class, text)| {
        let cell = el("td");
        let cell = if class.is_empty() { cell } else { cell.attr("class", class) };
        cell.text(text)
    }))
}

/// A table with a header row of `heads` and the given rows.
pub fn table(class: &str, testid: &str, heads: &[&str], rows: impl IntoIterator<Item = Node>) -> Node {
    let mut t = el_c("table", class);
    if !testid.is_empty() {
        t = t.attr("data-testid", testid);
    }
    let head = el("thead").child(el("tr").children(heads.iter().map(|h| el("th").attr("scope", "col").text(h))));
    el_c("div", "table-wrap").child(t.child(head).child(el("tbody").children(rows)))
}
