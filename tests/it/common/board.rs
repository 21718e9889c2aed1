//! A small builder for test stackups: the parts a test varies are given,
//! the YAML around them is written once. Each part is the inside of a YAML
//! flow mapping, as a stackup file writes it (`"dk: 3.5, df: 0.002,
//! frequency: 10 GHz"`).

use std::fmt::Write as _;

/// A stackup under construction.
#[derive(Debug, Clone, Default)]
pub struct Board {
    materials: Vec<(String, String)>,
    foils: Vec<(String, String)>,
    layers: Vec<String>,
    classes: Vec<String>,
    settings: Option<String>,
}

impl Board {
    pub fn new() -> Board {
        Board::default()
    }

    /// A copper plane, a dielectric of material `m`, a signal layer `S`,
    /// a second dielectric and a second plane: the symmetric stripline
    /// build (`P1`, `c1`, `S`, `c2`, `P2`; 18 µm copper).
    pub fn stripline(m: &str, c1: &str, c2: &str) -> Board {
        Board::new()
            .copper("P1", "role: plane, thickness: 18 um")
            .dielectric("c1", &format!("kind: core, material: {m}, thickness: {c1}"))
            .copper("S", "role: signal, thickness: 18 um")
            .dielectric("c2", &format!("kind: core, material: {m}, thickness: {c2}"))
            .copper("P2", "role: plane, thickness: 18 um")
    }

    /// A signal layer `L1` over a core `c` of material `m` and `h` over a
    /// plane `L2` (18 µm copper): the microstrip build.
    pub fn microstrip(m: &str, h: &str) -> Board {
        Board::new()
            .copper("L1", "role: signal, thickness: 18 um")
            .dielectric("c", &format!("kind: core, material: {m}, thickness: {h}"))
            .copper("L2", "role: plane, thickness: 18 um")
    }

    pub fn material(mut self, name: &str, fields: &str) -> Board {
        self.materials.push((name.into(), fields.into()));
        self
    }

    pub fn foil(mut self, name: &str, fields: &str) -> Board {
        self.foils.push((name.into(), fields.into()));
        self
    }

    pub fn copper(mut self, name: &str, fields: &str) -> Board {
        self.layers
            .push(format!("  - name: {name}\n    copper: {{{fields}}}\n"));
        self
    }

    pub fn dielectric(mut self, name: &str, fields: &str) -> Board {
        self.layers
            .push(format!("  - name: {name}\n    dielectric: {{{fields}}}\n"));
        self
    }

    /// A net class: the fields of its flow mapping.
    pub fn class(mut self, fields: &str) -> Board {
        self.classes.push(format!("  - {{{fields}}}\n"));
        self
    }

    /// The `settings:` block's body (indented two spaces by the caller).
    pub fn settings(mut self, body: &str) -> Board {
        self.settings = Some(body.into());
        self
    }

    /// The stackup file's text.
    pub fn yaml(&self) -> String {
        let mut t = String::from("stackup-lint: 1\n");
        let map = |t: &mut String, key: &str, v: &[(String, String)]| {
            if !v.is_empty() {
                let _ = writeln!(t, "{key}:");
                for (n, f) in v {
                    let _ = writeln!(t, "  {n}: {{{f}}}");
                }
            }
        };
        map(&mut t, "materials", &self.materials);
        map(&mut t, "foils", &self.foils);
        t.push_str("layers:\n");
        t.extend(self.layers.iter().cloned());
        if !self.classes.is_empty() {
            t.push_str("net-classes:\n");
            t.extend(self.classes.iter().cloned());
        }
        if let Some(s) = &self.settings {
            let _ = write!(t, "settings:\n{s}");
        }
        t
    }
}
