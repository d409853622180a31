//! Warnings: what is legal in an incident but suspect, reported beside the result instead of
//! refusing it (and refused under `--strict`).
//!
//! A warning names the part of the incident file it concerns, so that it prints as
//! `FILE:LINE:COL: warning: …` like an error, and is kept in `summary.json` and the briefing.
//! The file format raises the warnings it can see alone ([`Incident::warnings`]); the engine
//! adds those that need the computation (the grid, the land mask, the map's time).

use crate::crs;
use crate::locate::FieldPath;
use crate::model::{Incident, Item};
use serde::Serialize;
use std::path::PathBuf;

/// What a [`Warning`] is about; its `snake_case` name is the `kind` in `summary.json`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum WarningKind {
    /// A search ended before the reference time, which the prior describes.
    SearchBeforeReferenceTime,
    /// The map's time is before the reference time.
    MapBeforeReferenceTime,
    /// A drift scenario has not gone adrift by the map's time.
    NotYetAdrift,
    /// The land mask (or the water mask for an object ashore) takes most of a scenario's mass.
    ScenarioMasked,
    /// A search cannot reach the grid: it lies wholly outside it and can find nothing.
    SearchOutsideGrid,
    /// The `crs` is a UTM zone next to the incident's, not its own.
    CrsNeighbouringZone,
}

impl WarningKind {
    /// The name used in `summary.json` and the briefing.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::SearchBeforeReferenceTime => "search_before_reference_time",
            Self::MapBeforeReferenceTime => "map_before_reference_time",
            Self::NotYetAdrift => "not_yet_adrift",
            Self::ScenarioMasked => "scenario_masked",
            Self::SearchOutsideGrid => "search_outside_grid",
            Self::CrsNeighbouringZone => "crs_neighbouring_zone",
        }
    }
}

/// Something legal but suspect about an incident.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// What it is about.
    pub kind: WarningKind,
    /// The part of the incident file it concerns, when one is.
    pub item: Option<Item>,
    /// The key within that part, when one is (e.g. `reference_time` of the header).
    pub key: Option<&'static str>,
    /// What is suspect and what to do about it.
    pub message: String,
}

impl Warning {
    /// A warning about `item` (and its `key`, when given).
    #[must_use]
    pub fn new(
        kind: WarningKind,
        item: Item,
        key: Option<&'static str>,
        message: impl Into<String>,
    ) -> Self {
        Self {
            kind,
            item: Some(item),
            key,
            message: message.into(),
        }
    }
}

/// A warning with its place in the incident file, as printed and as written in
/// `summary.json` (`{ "kind", "file", "line", "column", "message" }`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LocatedWarning {
    /// What it is about ([`WarningKind::name`]).
    pub kind: WarningKind,
    /// The incident file.
    pub file: PathBuf,
    /// Line (from 1), when known.
    pub line: Option<usize>,
    /// Column (from 1), when known.
    pub column: Option<usize>,
    /// What is suspect and what to do about it.
    pub message: String,
}

impl std::fmt::Display for LocatedWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.file.display())?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(col) = self.column {
                write!(f, ":{col}")?;
            }
        }
        write!(f, ": warning: {}", self.message)
    }
}

impl Incident {
    /// The warnings the file alone shows (searches ended before the reference time, a `crs`
    /// in a neighbouring UTM zone), in file order.
    #[must_use]
    pub fn warnings(&self) -> Vec<Warning> {
        let mut out = Vec::new();
        if let Some(w) = self.crs_warning() {
            out.push(w);
        }
        for s in &self.searches {
            if s.end <= self.reference_time {
                out.push(Warning::new(
                    WarningKind::SearchBeforeReferenceTime,
                    Item::Search(s.id.clone()),
                    Some("end"),
                    format!(
                        "search \"{}\" ended at {}, before reference_time {}: the prior describes the reference time, so this search is applied to the belief of that time as if it had been made then; check the search's end and the incident's reference_time",
                        s.id,
                        s.end.format("%Y-%m-%dT%H:%MZ"),
                        self.reference_time.format("%Y-%m-%dT%H:%MZ")
                    ),
                ));
            }
        }
        out
    }

    /// A warning when the `crs` is the UTM zone next to the first position's (closer zones
    /// are quiet; farther ones are refused by the loader unless `allow_distant_crs = true`).
    fn crs_warning(&self) -> Option<Warning> {
        let zone = self.crs?;
        let d = crs::ZoneDistance::of(zone, self.first_position()?)?;
        if d.reach() != crs::ZoneReach::Neighbouring {
            return None;
        }
        let ([lon, lat], off, own) = (d.position, d.off_deg, d.own);
        let error = d.scale_error.unwrap_or(f64::NAN);
        Some(Warning::new(
            WarningKind::CrsNeighbouringZone,
            Item::Header,
            Some("crs"),
            format!(
                "crs = \"EPSG:{}\" is the UTM zone next to the incident's: its first position ({lon:.3}, {lat:.3}) is {off:.1} degrees from that zone's central meridian, where distances in the grid differ from those on the ground by {:+.2} %; use crs = \"EPSG:{}\" unless the incident spans both zones",
                zone.epsg(),
                100.0 * error,
                own.epsg()
            ),
        ))
    }

    /// Every warning with its place in the file.
    #[must_use]
    pub fn locate_warnings(&self, warnings: &[Warning]) -> Vec<LocatedWarning> {
        warnings.iter().map(|w| self.locate_warning(w)).collect()
    }

    /// A warning with its place in the file.
    #[must_use]
    pub fn locate_warning(&self, w: &Warning) -> LocatedWarning {
        let path: Option<FieldPath> = w.item.as_ref().map(|item| {
            let table = self.path_of(item);
            match w.key {
                Some(k) if self.locate(&table.key(k)).is_some() => table.key(k),
                _ => table,
            }
        });
        let (line, column) = path.and_then(|p| self.locate(&p)).unzip();
        LocatedWarning {
            kind: w.kind,
            file: self.path.clone(),
            line,
            column,
            message: w.message.clone(),
        }
    }
}
