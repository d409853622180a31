//! The registry of output layers: every file a run can write, its `--outputs` name, its files
//! and its one writer.
//!
//! Adding a layer takes four steps, and the compiler or a test stops you at each one you forget:
//! 1. a row in the `layers!` table below (variant, name, files, sidecars, description);
//! 2. its writer: one function taking the computed result ([`Computed`]) and a [`Recorder`],
//!    named in the `match` of `write_layer` (the match is exhaustive, so a layer without a
//!    writer does not compile);
//! 3. its row in README.md's "What a run writes" table (a test of the CLI compares every row
//!    with this table, and checks that `seekgrid map --help` / `seekgrid plan --help` list it);
//! 4. when it has details worth stating, a [`FileDetails`] variant.
//!
//! Writers write only through the [`Recorder`], which records each file it writes (sidecars
//! included) for `summary.json` and refuses a file name the layer does not declare.

use crate::gpx::GpsOptions;
use crate::heatmap::{GeoreferencedPng, png_set_names, tagged_png};
use crate::summary::{FileDetails, FileRecord, Summary};
use crate::{OutputDir, RenderError, outputs, plan_outputs, summary, tasking};
use seekgrid_engine::{IncidentMap, PlanRun};
use seekgrid_incident::model::Incident;
use serde::Serialize;
use std::collections::BTreeMap;
use std::collections::BTreeSet;

/// Defines [`Layer`] and its table from one list, so a layer cannot be half-registered.
macro_rules! layers {
    ($(
        $variant:ident {
            name: $name:literal,
            files: [$($file:literal),+],
            sidecars: [$($sidecar:literal),*],
            plan_only: $plan_only:literal,
            description: $description:literal $(,)?
        }
    )+) => {
        /// An output layer: one or more files written from the computed result by one writer.
        #[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
        pub enum Layer {
            $(
                #[doc = $description]
                $variant,
            )+
        }

        impl Layer {
            /// Every layer, in the order they are listed in `--help` and written (the summary,
            /// listed first, is written last so that it lists every other file).
            pub const ALL: &'static [Layer] = &[$(Layer::$variant),+];

            /// Its name for `--outputs`.
            #[must_use]
            pub fn name(self) -> &'static str {
                match self {
                    $(Layer::$variant => $name,)+
                }
            }

            /// The files it writes (the main ones; some are written only when there is
            /// something to put in them).
            #[must_use]
            pub fn files(self) -> &'static [&'static str] {
                match self {
                    $(Layer::$variant => &[$($file),+],)+
                }
            }

            /// The sidecars written beside its main file (world file, `.aux.xml`, `.prj`).
            #[must_use]
            pub fn sidecars(self) -> &'static [&'static str] {
                match self {
                    $(Layer::$variant => &[$($sidecar),*],)+
                }
            }

            /// Whether only `seekgrid plan` can write it (it needs a plan).
            #[must_use]
            pub fn plan_only(self) -> bool {
                match self {
                    $(Layer::$variant => $plan_only,)+
                }
            }

            /// What it holds, in one line (for `--help` and README.md).
            #[must_use]
            pub fn description(self) -> &'static str {
                match self {
                    $(Layer::$variant => $description,)+
                }
            }
        }
    };
}

layers! {
    Summary {
        name: "summary",
        files: ["summary.json"],
        sidecars: [],
        plan_only: false,
        description: "what the run computed (grid, normalised weights, `poc_in_grid`, `poc_outside` and its parts, analyst diagnostics, searches, drift, the plan's POS and bound), each phase's wall and CPU time (`phases`), and every file written, sidecars included",
    }
    Probability {
        name: "probability",
        files: ["probability.geojson"],
        sidecars: [],
        plan_only: false,
        description: "grid cells as lon/lat polygons with `poc` (probability of containment, a fraction) and `density_km2`, and `cell_id` (the cell's south-west corner and size in the working EPSG frame, such as `EPSG:32626:E400000:N3299750:250m`: the same in every run, unlike `row` and `col`); at most 200,000 cells: beyond that only the densest, up to 99.9 % of the grid's mass, and then the file and summary.json state the share of the mass (`share_of_grid_mass_written`) and the cells written; the heatmap draws every cell",
    }
    Containment {
        name: "containment",
        files: ["containment.geojson"],
        sidecars: [],
        plan_only: false,
        description: "the smallest regions holding 50 %, 90 % and 95 % of the grid's mass (`level`)",
    }
    Heatmap {
        name: "heatmap",
        files: ["heatmap.png"],
        sidecars: ["heatmap.pgw", "heatmap.png.aux.xml", "heatmap.prj"],
        plan_only: false,
        description: "the briefing picture of probability per km², georeferenced so GIS viewers place it",
    }
    HeatmapData {
        name: "heatmap-data",
        files: ["heatmap-data.png"],
        sidecars: ["heatmap-data.pgw", "heatmap-data.png.aux.xml", "heatmap-data.prj"],
        plan_only: false,
        description: "the map alone as data: one pixel per cell over exactly the grid's extent, coloured as the heatmap and transparent where the probability is 0, georeferenced (world file, `.aux.xml`, `.prj`) to lie over a basemap",
    }
    Segments {
        name: "segments",
        files: ["segments.csv", "segments.geojson"],
        sidecars: [],
        plan_only: false,
        description: "POA, area and density per segment, as a table and as polygons, and after searches cumulative POD and POS (written when the incident uses segments); each POA is the belief integrated over the segment's polygons (a cell cut by a segment edge is split where its scenarios put the mass, not by area), and `poa_rest_of_world` and `poa_outside_segments` (in `segments.geojson` and `summary.json`) add up with the POAs to 1",
    }
    Searches {
        name: "searches",
        files: ["searches.geojson"],
        sidecars: [],
        plan_only: false,
        description: "each applied search's area or track with sweep width, track spacing, coverage, POD and POS (written when searches were applied)",
    }
    Pod {
        name: "pod",
        files: ["pod.png"],
        sidecars: ["pod.pgw", "pod.png.aux.xml", "pod.prj"],
        plan_only: false,
        description: "the cumulative POD map, georeferenced (written when searches were applied)",
    }
    Particles {
        name: "particles",
        files: ["particles.geojson"],
        sidecars: [],
        plan_only: false,
        description: "a thinned sample of the drifting particles, each weighted with the mass of those it stands for (written when a scenario drifts)",
    }
    Drift {
        name: "drift",
        files: ["drift.geojson"],
        sidecars: [],
        plan_only: false,
        description: "the hourly mean drift track of each drifting scenario and its 50 % and 90 % ellipses (written when a scenario drifts)",
    }
    Rasters {
        name: "rasters",
        files: ["poc.tif", "density.tif", "pod.tif"],
        sidecars: [],
        plan_only: false,
        description: "Float32 GeoTIFF rasters of the grid in the working EPSG frame, for computing in a GIS: `poc.tif` (POC per cell), `density.tif` (probability per km²) and, after searches, `pod.tif` (cumulative POD); no-data -9999, the run id and provenance in the GDAL metadata, internal overviews (striped, not the Cloud Optimized layout)",
    }
    Plan {
        name: "plan",
        files: ["plan.geojson"],
        sidecars: [],
        plan_only: true,
        description: "each unit's area, track and commence search point, and each ground team's segment, as GIS layers",
    }
    Routes {
        name: "routes",
        files: ["plan.gpx"],
        sidecars: [],
        plan_only: true,
        description: "one GPX route per unit for its navigation set: an area's waypoints from the commence search point, a segment's boundary",
    }
    Waypoints {
        name: "waypoints",
        files: ["plan-waypoints.gpx"],
        sidecars: [],
        plan_only: true,
        description: "GPX waypoints only, for sets that take no routes: each area's commence search point and corners and each segment's corners, named as in plan.gpx (written when chosen with `--outputs`)",
    }
    Briefing {
        name: "briefing",
        files: ["plan.md"],
        sidecars: [],
        plan_only: true,
        description: "the briefing: the plan's joint POS and its bound (the same numbers as summary.json), then per unit the area's corners and legs in its chosen position format (degrees and decimal minutes by default), spacing, coverage, POD, POS and time needed",
    }
    PlanMap {
        name: "plan-map",
        files: ["plan.png"],
        sidecars: ["plan.pgw", "plan.png.aux.xml", "plan.prj"],
        plan_only: true,
        description: "the plan's areas, tracks and segments over the probability map, georeferenced",
    }
    Tasking {
        name: "tasking",
        files: ["tasking.toml"],
        sidecars: [],
        plan_only: true,
        description: "the run id, the period and each unit's pattern, sweep width and law (or segments) at full precision, for `seekgrid log --plan`",
    }
    Effort {
        name: "effort",
        files: ["effort.png", "effort.tif"],
        sidecars: ["effort.pgw", "effort.png.aux.xml", "effort.prj"],
        plan_only: true,
        description: "the optimal coverage (effort over area) that gives the bound `pos_optimal_bound`, georeferenced, as a picture and as a Float32 GeoTIFF like the `rasters` layer",
    }
    Kml {
        name: "kml",
        files: ["plan.kml"],
        sidecars: [],
        plan_only: true,
        description: "the containment regions at the plan's start and the plan's areas, tracks, commence search points and segments, as OGC KML 2.2 for virtual globes (a folder each)",
    }
}

impl Layer {
    /// The layer named `name` (as in `--outputs`).
    ///
    /// # Errors
    /// Names the unknown layer and lists the known ones.
    pub fn from_name(name: &str) -> Result<Self, String> {
        Self::ALL
            .iter()
            .copied()
            .find(|l| l.name() == name)
            .ok_or_else(|| {
                let known: Vec<&str> = Self::ALL.iter().map(|l| l.name()).collect();
                format!(
                    "unknown output \"{name}\"; choose from {}",
                    known.join(", ")
                )
            })
    }

    /// Whether `name` is one of its files or sidecars.
    #[must_use]
    pub fn declares(self, name: &str) -> bool {
        self.files().contains(&name) || self.sidecars().contains(&name)
    }
}

impl Serialize for Layer {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.name())
    }
}

/// Which layers to write.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputSelection(BTreeSet<Layer>);

impl OutputSelection {
    /// Every layer `seekgrid map` can write (all but the plan's).
    #[must_use]
    pub fn map_default() -> Self {
        Self(
            Layer::ALL
                .iter()
                .copied()
                .filter(|l| !l.plan_only())
                .collect(),
        )
    }

    /// The layers `seekgrid plan` writes by default: the summary, the belief at the start
    /// (probability, containment, heatmap, segments, rasters) and every plan layer but the
    /// waypoints (for sets that take no routes, written when chosen).
    #[must_use]
    pub fn plan_default() -> Self {
        use Layer as L;
        let belief = [
            L::Summary,
            L::Probability,
            L::Containment,
            L::Heatmap,
            L::HeatmapData,
            L::Segments,
            L::Rasters,
        ];
        Self(
            Layer::ALL
                .iter()
                .copied()
                .filter(|l| (l.plan_only() && *l != L::Waypoints) || belief.contains(l))
                .collect(),
        )
    }

    /// Exactly these layers (duplicates ignored).
    #[must_use]
    pub fn of(layers: &[Layer]) -> Self {
        Self(layers.iter().copied().collect())
    }

    /// These layers and `layer`.
    #[must_use]
    pub fn with(mut self, layer: Layer) -> Self {
        self.0.insert(layer);
        self
    }

    /// Whether a layer is chosen.
    #[must_use]
    pub fn has(&self, layer: Layer) -> bool {
        self.0.contains(&layer)
    }

    /// Whether nothing is chosen.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    /// The chosen layers in writing order: as [`Layer::ALL`], with the summary last.
    fn in_write_order(&self) -> impl Iterator<Item = Layer> + '_ {
        Layer::ALL
            .iter()
            .copied()
            .filter(|l| *l != Layer::Summary)
            .chain(std::iter::once(Layer::Summary))
            .filter(|l| self.has(*l))
    }
}

/// The computed result the writers read: the incident, its map and, from `seekgrid plan`, the
/// plan (whose `map` is the belief at the plan's start).
#[derive(Debug, Clone, Copy)]
pub struct Computed<'a> {
    /// The incident.
    pub incident: &'a Incident,
    /// The belief and everything computed with it.
    pub map: &'a IncidentMap,
    /// The plan, when one was made.
    pub plan: Option<&'a PlanRun>,
    /// The run's choices that shape the files (GPS names, the time the files are made).
    pub settings: OutputSettings,
}

/// The run's choices that shape the files but not what is computed.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct OutputSettings {
    /// How the GPS files name and split routes.
    pub gps: GpsOptions,
    /// When the files are made (the GPX `metadata/time`); `None` leaves it out.
    pub made_at: Option<chrono::DateTime<chrono::Utc>>,
    /// How positions are written (`--positions`): over the incident's choice, under a unit's.
    pub positions: Option<seekgrid_incident::model::PositionFormat>,
}

impl<'a> Computed<'a> {
    /// A map run.
    #[must_use]
    pub fn map(incident: &'a Incident, map: &'a IncidentMap) -> Self {
        Self {
            incident,
            map,
            plan: None,
            settings: OutputSettings::default(),
        }
    }

    /// A plan run: the plan and the belief at its start.
    #[must_use]
    pub fn plan(incident: &'a Incident, run: &'a PlanRun) -> Self {
        Self {
            incident,
            map: &run.map,
            plan: Some(run),
            settings: OutputSettings::default(),
        }
    }

    /// The same, with the run's settings.
    #[must_use]
    pub fn with_settings(mut self, settings: OutputSettings) -> Self {
        self.settings = settings;
        self
    }
}

/// Writes files into an [`OutputDir`] for the writers and records each one for the summary.
#[derive(Debug)]
pub struct Recorder<'d> {
    dir: &'d OutputDir,
    files: BTreeMap<String, FileRecord>,
    not_written: BTreeMap<&'static str, String>,
}

impl<'d> Recorder<'d> {
    /// A recorder writing into `dir`.
    #[must_use]
    pub fn new(dir: &'d OutputDir) -> Self {
        Self {
            dir,
            files: BTreeMap::new(),
            not_written: BTreeMap::new(),
        }
    }

    /// Writes the file `name` of `layer` atomically and records it with its details.
    ///
    /// # Errors
    /// [`RenderError::Internal`] when `layer` does not declare `name` (a bug), else as
    /// [`OutputDir::write`].
    pub fn write(
        &mut self,
        layer: Layer,
        name: &str,
        bytes: &[u8],
        details: Option<FileDetails>,
    ) -> Result<(), RenderError> {
        self.write_record(layer, name, bytes, details, None)
    }

    /// Writes a georeferenced picture: the layer's main file (`stem.png`, carrying the run id in
    /// a `tEXt` chunk) and its three sidecars, each recorded (the sidecars with the picture they
    /// belong to).
    ///
    /// # Errors
    /// As [`Recorder::write`].
    pub fn write_picture(
        &mut self,
        layer: Layer,
        png: &GeoreferencedPng,
    ) -> Result<(), RenderError> {
        let main = layer.files()[0];
        let stem = main.strip_suffix(".png").ok_or_else(|| {
            RenderError::Internal(format!("layer {} has no PNG main file", layer.name()))
        })?;
        let [png_name, world, aux, prj] = png_set_names(stem);
        let details = FileDetails::Picture {
            pixels_per_cell: png.pixels_per_cell,
        };
        let tagged = tagged_png(png, self.dir.run_id())?;
        self.write_record(layer, &png_name, &tagged, Some(details), None)?;
        for (name, text) in [
            (world, &png.world_file),
            (aux, &png.aux_xml),
            (prj, &png.prj),
        ] {
            self.write_record(layer, &name, text.as_bytes(), None, Some(main))?;
        }
        Ok(())
    }

    /// Writes a file whose content lists the files written, this one included (the summary):
    /// records it first, then asks `content` for its bytes given every record.
    ///
    /// # Errors
    /// As [`Recorder::write`], and whatever `content` returns.
    pub fn write_listing(
        &mut self,
        layer: Layer,
        name: &str,
        content: impl FnOnce(&Self) -> Result<Vec<u8>, RenderError>,
    ) -> Result<(), RenderError> {
        self.check(layer, name)?;
        self.files
            .insert(name.to_owned(), FileRecord::new(layer, None, None));
        let bytes = content(self)?;
        self.dir.write(name, &bytes)?;
        Ok(())
    }

    /// The run id every file carries ([`OutputDir::run_id`]).
    #[must_use]
    pub fn run_id(&self) -> &str {
        self.dir.run_id()
    }

    /// The run's provenance ([`OutputDir::provenance`]), if the caller gave one.
    #[must_use]
    pub fn provenance(&self) -> Option<&crate::Provenance> {
        self.dir.provenance()
    }

    /// Records that a chosen layer wrote nothing, and why.
    pub fn skip(&mut self, layer: Layer, reason: impl Into<String>) {
        self.not_written.insert(layer.name(), reason.into());
    }

    /// The files written so far, by name.
    #[must_use]
    pub fn files(&self) -> &BTreeMap<String, FileRecord> {
        &self.files
    }

    /// The chosen layers that wrote nothing, with the reason.
    #[must_use]
    pub fn not_written(&self) -> &BTreeMap<&'static str, String> {
        &self.not_written
    }

    fn check(&self, layer: Layer, name: &str) -> Result<(), RenderError> {
        if layer.declares(name) {
            Ok(())
        } else {
            Err(RenderError::Internal(format!(
                "layer {} wrote {name}, a file it does not declare",
                layer.name()
            )))
        }
    }

    fn write_record(
        &mut self,
        layer: Layer,
        name: &str,
        bytes: &[u8],
        details: Option<FileDetails>,
        sidecar_of: Option<&str>,
    ) -> Result<(), RenderError> {
        self.check(layer, name)?;
        self.dir.write(name, bytes)?;
        self.files.insert(
            name.to_owned(),
            FileRecord::new(layer, sidecar_of.map(str::to_owned), details),
        );
        Ok(())
    }
}

/// Writes one layer with its one writer.
///
/// # Errors
/// [`RenderError`] from the writer.
fn write_layer(layer: Layer, c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    use Layer as L;
    match layer {
        L::Summary => summary::write(c, out),
        L::Probability => outputs::probability(c, out),
        L::Containment => outputs::containment(c, out),
        L::Heatmap => outputs::heatmap(c, out),
        L::HeatmapData => outputs::heatmap_data(c, out),
        L::Segments => outputs::segments(c, out),
        L::Searches => outputs::searches(c, out),
        L::Pod => outputs::pod(c, out),
        L::Rasters => outputs::rasters(c, out),
        L::Particles => outputs::particles(c, out),
        L::Drift => outputs::drift(c, out),
        L::Plan => with_plan(layer, c, out, plan_outputs::geojson),
        L::Kml => with_plan(layer, c, out, plan_outputs::kml),
        L::Routes => with_plan(layer, c, out, plan_outputs::gpx),
        L::Waypoints => with_plan(layer, c, out, plan_outputs::waypoints_gpx),
        L::Briefing => with_plan(layer, c, out, plan_outputs::briefing),
        L::Tasking => with_plan(layer, c, out, tasking::write),
        L::PlanMap => with_plan(layer, c, out, plan_outputs::picture),
        L::Effort => with_plan(layer, c, out, plan_outputs::effort),
    }
}

/// A writer of a plan layer.
type PlanWriter = fn(&Computed, &PlanRun, &mut Recorder) -> Result<(), RenderError>;

/// Runs a plan layer's writer, or records why it wrote nothing when no plan was made.
fn with_plan(
    layer: Layer,
    c: &Computed,
    out: &mut Recorder,
    writer: PlanWriter,
) -> Result<(), RenderError> {
    match c.plan {
        Some(run) => writer(c, run, out),
        None => {
            out.skip(layer, "written by `seekgrid plan` only: no plan was made");
            Ok(())
        }
    }
}

/// Writes the chosen layers (the summary last) and returns the summary, which lists every file
/// written (sidecars included) and the chosen layers that wrote nothing. Each layer's writing
/// is timed into the map's phases (the summary lists those written before it).
///
/// # Errors
/// [`RenderError`] from a writer (a file that cannot be written, a layer that cannot be drawn).
pub fn write(
    c: &Computed,
    dir: &OutputDir,
    selection: &OutputSelection,
) -> Result<Summary, RenderError> {
    let mut out = Recorder::new(dir);
    for layer in selection.in_write_order() {
        c.map.phases.time(&format!("write {}", layer.name()), || {
            write_layer(layer, c, &mut out)
        })?;
    }
    Ok(summary::summarise(c, &out))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_and_files_are_unique_and_names_parse_back() {
        let mut names = BTreeSet::new();
        let mut files = BTreeSet::new();
        for l in Layer::ALL {
            assert!(names.insert(l.name()), "{} twice", l.name());
            assert_eq!(Layer::from_name(l.name()), Ok(*l));
            for f in l.files().iter().chain(l.sidecars()) {
                assert!(files.insert(*f), "{f} declared twice");
                assert!(l.declares(f));
            }
            assert!(!l.description().is_empty());
        }
        let err = Layer::from_name("heatmaps").unwrap_err();
        assert!(
            err.contains("heatmaps") && err.contains("probability"),
            "{err}"
        );
    }

    #[test]
    fn the_tasking_layer_writes_the_file_seekgrid_log_reads() {
        assert_eq!(
            Layer::Tasking.files(),
            [seekgrid_incident::tasking::TASKING_FILE]
        );
    }

    #[test]
    fn picture_layers_declare_the_sidecars_the_picture_writer_writes() {
        for l in Layer::ALL {
            if let Some(stem) = l.files()[0].strip_suffix(".png") {
                let [_, world, aux, prj] = png_set_names(stem);
                assert_eq!(l.sidecars(), [world, aux, prj], "{}", l.name());
            } else {
                assert!(l.sidecars().is_empty(), "{}", l.name());
            }
        }
    }

    /// The invented incident of the golden tests, planned from after its two searches (it has
    /// segments, searches, a drifting scenario, a boat and a ground team, so every layer has
    /// something to write).
    fn tiny_plan() -> (seekgrid_incident::Incident, PlanRun) {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../fixtures/golden/tiny/incident.toml");
        let incident = seekgrid_incident::load(&path).unwrap();
        let start = chrono::DateTime::parse_from_rfc3339("2026-03-10T11:00:00Z")
            .unwrap()
            .with_timezone(&chrono::Utc);
        let run = seekgrid_engine::plan_at(&incident, start, &|_, _, _| {}).unwrap();
        (incident, run)
    }

    /// Writes `chosen` layers of `c` into a new folder `out` under `tmp` and puts it in place;
    /// returns the summary and the folder.
    fn write_into(
        tmp: &tempfile::TempDir,
        c: &Computed,
        chosen: &OutputSelection,
    ) -> (Summary, std::path::PathBuf) {
        let out = tmp.path().join("out");
        let options = crate::OutputOptions {
            run_id: "test-run",
            force: false,
            inputs: &[],
        };
        let dir = OutputDir::create(&out, &options).unwrap();
        let summary = write(c, &dir, chosen).unwrap();
        dir.commit().unwrap();
        (summary, out)
    }

    fn folder_listing(dir: &std::path::Path) -> BTreeSet<String> {
        std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect()
    }

    #[test]
    fn the_summary_lists_exactly_the_files_written_each_by_the_layer_that_declares_it() {
        let (incident, run) = tiny_plan();
        let tmp = tempfile::tempdir().unwrap();
        let all = OutputSelection::of(Layer::ALL);
        let (summary, out) = write_into(&tmp, &Computed::plan(&incident, &run), &all);
        let on_disk = folder_listing(&out);
        let listed: BTreeSet<String> = summary.outputs.keys().cloned().collect();
        assert_eq!(listed, on_disk);
        // Every layer had something to write, so every declared file is there.
        let declared: BTreeSet<String> = Layer::ALL
            .iter()
            .flat_map(|l| l.files().iter().chain(l.sidecars()))
            .map(|f| (*f).to_owned())
            .collect();
        assert_eq!(declared, on_disk);
        assert!(summary.outputs_not_written.is_empty());
        for (name, record) in &summary.outputs {
            assert!(record.layer.declares(name), "{name}");
            assert_eq!(
                record.sidecar_of.is_some(),
                record.layer.sidecars().contains(&name.as_str()),
                "{name}"
            );
        }
        // The file on disk says the same as the summary returned.
        let text = std::fs::read_to_string(out.join("summary.json")).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        let in_file: BTreeSet<String> = v["outputs"].as_object().unwrap().keys().cloned().collect();
        assert_eq!(in_file, on_disk);
        assert_eq!(v["run_id"], "test-run");
        assert_eq!(summary.run_id.as_deref(), Some("test-run"));
        assert_eq!(v["outputs"]["plan.gpx"]["layer"], "routes");
        assert_eq!(v["outputs"]["pod.prj"]["sidecar_of"], "pod.png");
    }

    #[test]
    fn the_briefing_states_the_summary_numbers_and_what_each_covers() {
        let (incident, run) = tiny_plan();
        let tmp = tempfile::tempdir().unwrap();
        let chosen = OutputSelection::of(&[Layer::Summary, Layer::Briefing]);
        let (summary, out) = write_into(&tmp, &Computed::plan(&incident, &run), &chosen);
        let md = std::fs::read_to_string(out.join("plan.md")).unwrap();
        let (pos, bound) = (
            summary.pos_plan.unwrap(),
            summary.pos_optimal_bound.unwrap(),
        );
        let plan = summary.plan.unwrap();
        let headline = md
            .lines()
            .find(|l| l.starts_with("Joint POS of the whole plan"))
            .unwrap();
        assert!(headline.contains(&format!("**{pos:.3}**")), "{headline}");
        assert!(headline.contains(&format!("**{bound:.3}**")), "{headline}");
        assert!(headline.contains(&plan.pos_plan_covers), "{headline}");
        // The whole plan combines the parts, each stated with its own number.
        let (areas, teams) = (plan.areas.unwrap(), plan.ground_teams.unwrap());
        assert!((pos - (1.0 - (1.0 - areas.pos_plan) * (1.0 - teams.pos_plan))).abs() < 1e-15);
        assert!(md.contains(&format!(
            "Joint POS of the search areas (boat-1): **{:.3}**",
            areas.pos_plan
        )));
        assert!(md.contains(&format!(
            "Joint POS of the team assignment: **{:.3}**",
            teams.pos_plan
        )));
        // Markdown hygiene: a list after a table is parted by a blank line, one newline ends the
        // file, and counts agree with their nouns.
        assert!(
            md.ends_with('\n') && !md.ends_with("\n\n"),
            "one newline ends the file"
        );
        let lines: Vec<&str> = md.lines().collect();
        for w in lines.windows(2) {
            assert!(
                !(w[0].starts_with('|') && w[1].starts_with("- ")),
                "no blank line between a table and a list: {w:?}"
            );
        }
        assert!(md.contains("of 1 team to 3 segments"), "{md}");
    }

    #[test]
    fn a_map_run_lists_what_it_wrote_and_why_the_plan_layers_are_missing() {
        let (incident, run) = tiny_plan();
        let tmp = tempfile::tempdir().unwrap();
        let chosen = OutputSelection::of(&[Layer::Summary, Layer::Segments, Layer::Briefing]);
        let (summary, out) = write_into(&tmp, &Computed::map(&incident, &run.map), &chosen);
        let listed: BTreeSet<String> = summary.outputs.keys().cloned().collect();
        assert_eq!(listed, folder_listing(&out));
        assert_eq!(
            listed,
            ["segments.csv", "segments.geojson", "summary.json"]
                .map(str::to_owned)
                .into()
        );
        assert!(summary.outputs_not_written["briefing"].contains("seekgrid plan"));
        assert!(summary.plan.is_none() && summary.pos_plan.is_none());
    }

    #[test]
    fn the_summary_is_written_last_and_plan_layers_only_by_default_for_plans() {
        let all = OutputSelection::of(Layer::ALL);
        let order: Vec<Layer> = all.in_write_order().collect();
        assert_eq!(order.len(), Layer::ALL.len());
        assert_eq!(order.last(), Some(&Layer::Summary));
        let map = OutputSelection::map_default();
        assert!(Layer::ALL.iter().all(|l| map.has(*l) != l.plan_only()));
        let plan = OutputSelection::plan_default();
        assert!(plan.has(Layer::Summary) && plan.has(Layer::Effort) && !plan.has(Layer::Pod));
        assert!(plan.has(Layer::Routes) && !plan.has(Layer::Waypoints));
    }
}
