//! The catalogue of bad inputs, as a test: each row edits a small valid incident (a copy of the
//! invented marine demo with fewer particles), runs the binary, and checks the exit code, the
//! words of the message (the field and the fix), that a message about the file carries
//! FILE:LINE:COL, that no Rust type names or settings the file does not accept are shown, and
//! that no output folder was created.
//!
//! Rows with exit code 0 are legal but suspect inputs: the run succeeds and the message must
//! hold the warning's words (with its FILE:LINE:COL when the row says so).

use std::path::{Path, PathBuf};
use std::process::Command;

/// One change to the valid incident folder.
#[derive(Clone, Copy)]
enum Edit {
    /// Nothing changed (the row's arguments carry the fault).
    None,
    /// Replace the first occurrence of `.0` in incident.toml by `.1` (the text must be there).
    Replace(&'static str, &'static str),
    /// Append text to incident.toml.
    Append(&'static str),
    /// Replace (or create) a file of the incident folder with this content.
    File(&'static str, &'static str),
    /// Replace a file of the incident folder by a named pipe (FIFO).
    Fifo(&'static str),
    /// Two edits.
    Both(&'static Edit, &'static Edit),
}

/// Which command runs, with its extra arguments; `{dir}` stands for the incident's folder.
#[derive(Clone, Copy)]
enum Run {
    Check(&'static [&'static str]),
    Map(&'static [&'static str]),
    Plan(&'static [&'static str]),
}

/// One row of the catalogue.
struct Row {
    /// What the row checks.
    name: &'static str,
    edit: Edit,
    run: Run,
    /// Expected exit code: 2 bad input, 0 legal but suspect (with a warning).
    code: i32,
    /// Words the message must contain (case-insensitive).
    words: &'static [&'static str],
    /// Whether the message must carry `incident.toml:LINE:COL`.
    located: bool,
}

const fn bad(name: &'static str, edit: Edit, words: &'static [&'static str]) -> Row {
    Row {
        name,
        edit,
        run: Run::Check(&[]),
        code: 2,
        words,
        located: true,
    }
}

/// A bad referenced file: the message carries that file's path (and line where it has one).
const fn badf(name: &'static str, edit: Edit, words: &'static [&'static str]) -> Row {
    Row {
        name,
        edit,
        run: Run::Check(&[]),
        code: 2,
        words,
        located: false,
    }
}

const fn warn(name: &'static str, edit: Edit, run: Run, words: &'static [&'static str]) -> Row {
    Row {
        name,
        edit,
        run,
        code: 0,
        words,
        located: true,
    }
}

const fn args(name: &'static str, run: Run, words: &'static [&'static str]) -> Row {
    Row {
        name,
        edit: Edit::None,
        run,
        code: 2,
        words,
        located: false,
    }
}

use Edit::{Append, File, Replace};

const POINT: &str = "sigma_major_m = 1400";
const ROUTE: &str = "cross_track_sigma_m = 900";
const DRIFT_CURRENT: &str =
    "current = { speed_kn = 0.6, toward_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }";
const SWEEP: &str = "sweep_width_m = 900          # invented for the demo";
const PATTERN: &str = "length_m = 9000";

/// Rows asserted today.
const CASES: &[Row] = &[
    // --- the [incident] table
    bad(
        "reference time not a time",
        Replace(
            "reference_time = \"2026-06-14T18:00:00Z\"",
            "reference_time = \"tomorrow\"",
        ),
        &["reference_time"],
    ),
    bad(
        "reference time without zone",
        Replace(
            "reference_time = \"2026-06-14T18:00:00Z\"",
            "reference_time = \"2026-06-14T18:00:00\"",
        ),
        &["reference_time"],
    ),
    bad(
        "title missing",
        Replace(
            "title = \"Overdue day-sailer off Wrenhold Island (invented demo)\"",
            "",
        ),
        &["title"],
    ),
    bad(
        "unknown key in incident",
        Replace(
            "object_afloat = true",
            "object_afloat = true\nobject_floats = true",
        ),
        &["object_floats"],
    ),
    badf(
        "coastline file missing",
        Replace(
            "coastline = \"coast.geojson\"",
            "coastline = \"nowhere.geojson\"",
        ),
        &["nowhere.geojson"],
    ),
    badf(
        "coastline not GeoJSON",
        File("coast.geojson", "this is not json"),
        &["coast.geojson"],
    ),
    badf(
        "coastline empty file",
        File("coast.geojson", ""),
        &["coast.geojson"],
    ),
    badf(
        "coastline a point",
        File(
            "coast.geojson",
            "{\"type\":\"Point\",\"coordinates\":[-40.9,31.5]}",
        ),
        &["coast.geojson"],
    ),
    bad(
        "crs not EPSG",
        Replace(
            "object_afloat = true",
            "object_afloat = true\ncrs = \"UTM 24\"",
        ),
        &["crs"],
    ),
    bad(
        "crs not a UTM zone",
        Replace(
            "object_afloat = true",
            "object_afloat = true\ncrs = \"EPSG:4326\"",
        ),
        &["crs"],
    ),
    // --- [grid]
    bad(
        "cell size zero",
        Replace("cell_m = 250", "cell_m = 0"),
        &["cell_m"],
    ),
    bad(
        "cell size negative",
        Replace("cell_m = 250", "cell_m = -250"),
        &["cell_m"],
    ),
    bad(
        "cell size nan",
        Replace("cell_m = 250", "cell_m = nan"),
        &["cell_m"],
    ),
    bad(
        "cell size infinite",
        Replace("cell_m = 250", "cell_m = inf"),
        &["cell_m"],
    ),
    bad(
        "unknown key in grid",
        Replace("cell_m = 250", "cell_m = 250\ncell_size = 3"),
        &["cell_size"],
    ),
    bad(
        "bounds west east swapped",
        Replace(
            "cell_m = 250",
            "cell_m = 250\nbounds = { west = -40.8, south = 31.4, east = -41.1, north = 31.7 }",
        ),
        &["bounds"],
    ),
    bad(
        "bounds south north swapped",
        Replace(
            "cell_m = 250",
            "cell_m = 250\nbounds = { west = -41.1, south = 31.7, east = -40.8, north = 31.4 }",
        ),
        &["bounds"],
    ),
    bad(
        "bounds latitude beyond 90",
        Replace(
            "cell_m = 250",
            "cell_m = 250\nbounds = { west = -41.1, south = 31.4, east = -40.8, north = 91 }",
        ),
        &["bounds"],
    ),
    bad(
        "bounds missing a side",
        Replace(
            "cell_m = 250",
            "cell_m = 250\nbounds = { west = -41.1, south = 31.4, east = -40.8 }",
        ),
        &["north"],
    ),
    bad(
        "max_cells zero",
        Replace("cell_m = 250", "cell_m = 250\nmax_cells = 0"),
        &["max_cells"],
    ),
    // --- analysts
    bad(
        "analyst weight negative",
        Replace("weight = 2.0", "weight = -2.0"),
        &["weight"],
    ),
    bad(
        "analyst weight nan",
        Replace("weight = 2.0", "weight = nan"),
        &["weight"],
    ),
    bad(
        "analyst id repeated",
        Replace("id = \"ops-desk\"", "id = \"harbour-desk\""),
        &["harbour-desk"],
    ),
    bad(
        "analyst id empty",
        Replace("id = \"duty-officer\"", "id = \"\""),
        &["id"],
    ),
    bad(
        "unknown analyst key",
        Replace("note = \"knows the owner's habits\"", "notes = \"x\""),
        &["notes"],
    ),
    // --- scenarios
    bad(
        "scenario names unknown analyst",
        Replace("analyst = \"duty-officer\"", "analyst = \"night-desk\""),
        &["night-desk"],
    ),
    bad(
        "scenario id repeated",
        Replace(
            "id = \"on-the-planned-route\"",
            "id = \"anchored-off-gull-point\"",
        ),
        &["anchored-off-gull-point"],
    ),
    bad(
        "scenario kind unknown",
        Replace("kind = \"route\"", "kind = \"path\""),
        &["kind"],
    ),
    bad(
        "scenario weight negative",
        Replace(
            "weight = 0.5\nkind = \"point\"",
            "weight = -0.5\nkind = \"point\"",
        ),
        &["weight"],
    ),
    bad(
        "point sigma negative",
        Replace(POINT, "sigma_major_m = -1400"),
        &["sigma_major_m"],
    ),
    bad(
        "point sigma zero",
        Replace(POINT, "sigma_major_m = 0"),
        &["sigma_major_m"],
    ),
    bad(
        "point sigma nan",
        Replace(POINT, "sigma_major_m = nan"),
        &["sigma_major_m"],
    ),
    bad(
        "point minor sigma negative",
        Replace("sigma_minor_m = 700", "sigma_minor_m = -700"),
        &["sigma_minor_m"],
    ),
    bad(
        "point minor sigma missing",
        Replace("sigma_minor_m = 700", ""),
        &["sigma_minor_m"],
    ),
    bad(
        "point position latitude beyond 90",
        Replace(
            "position = [-40.955, 31.548]",
            "position = [-40.955, 131.548]",
        ),
        &["position"],
    ),
    bad(
        "point position longitude beyond 180",
        Replace(
            "position = [-40.955, 31.548]",
            "position = [-240.955, 31.548]",
        ),
        &["position"],
    ),
    bad(
        "route one waypoint",
        Replace(
            "waypoints = [[-40.925, 31.505], [-40.915, 31.555], [-40.985, 31.58], [-41.075, 31.548]]",
            "waypoints = [[-40.925, 31.505]]",
        ),
        &["waypoints"],
    ),
    bad(
        "route sigma negative",
        Replace(ROUTE, "cross_track_sigma_m = -900"),
        &["cross_track_sigma_m"],
    ),
    bad(
        "route sigma zero",
        Replace(ROUTE, "cross_track_sigma_m = 0"),
        &["cross_track_sigma_m"],
    ),
    badf(
        "area polygon file missing",
        Replace(
            "polygon = \"areas/kestrel-bay.geojson\"",
            "polygon = \"areas/none.geojson\"",
        ),
        &["none.geojson"],
    ),
    badf(
        "area polygon not JSON",
        File("areas/kestrel-bay.geojson", "{"),
        &["kestrel-bay.geojson"],
    ),
    badf(
        "area polygon a line",
        File(
            "areas/kestrel-bay.geojson",
            "{\"type\":\"LineString\",\"coordinates\":[[-40.9,31.5],[-40.8,31.6]]}",
        ),
        &["kestrel-bay.geojson"],
    ),
    badf(
        "area polygon empty collection",
        File(
            "areas/kestrel-bay.geojson",
            "{\"type\":\"FeatureCollection\",\"features\":[]}",
        ),
        &["kestrel-bay.geojson"],
    ),
    bad(
        "drift particles zero",
        Replace("particles = 20000", "particles = 0"),
        &["particles"],
    ),
    bad(
        "drift position sigma negative",
        Replace("position_sigma_m = 800", "position_sigma_m = -800"),
        &["position_sigma_m"],
    ),
    bad(
        "drift adrift window reversed",
        Replace(
            "adrift = { earliest = \"2026-06-14T15:00:00Z\", latest = \"2026-06-14T17:00:00Z\" }",
            "adrift = { earliest = \"2026-06-14T17:00:00Z\", latest = \"2026-06-14T15:00:00Z\" }",
        ),
        &["adrift"],
    ),
    bad(
        "drift adrift not a time",
        Replace(
            "earliest = \"2026-06-14T15:00:00Z\"",
            "earliest = \"15:00\"",
        ),
        &["earliest"],
    ),
    bad(
        "drift current speed negative",
        Replace(
            DRIFT_CURRENT,
            "current = { speed_kn = -0.6, toward_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }",
        ),
        &["speed_kn"],
    ),
    bad(
        "drift current from_deg instead of toward_deg",
        Replace(
            DRIFT_CURRENT,
            "current = { speed_kn = 0.6, from_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }",
        ),
        &["toward_deg"],
    ),
    badf(
        "drift wind series missing",
        Replace("series = \"wind.csv\"", "series = \"none.csv\""),
        &["none.csv"],
    ),
    badf(
        "drift wind series no rows",
        File("wind.csv", "time,speed_kn,direction_deg\n"),
        &["wind.csv"],
    ),
    badf(
        "drift wind series bad time",
        File("wind.csv", "time,speed_kn,direction_deg\nnoon,12,245\n"),
        &["wind.csv"],
    ),
    badf(
        "drift wind series bad speed",
        File(
            "wind.csv",
            "time,speed_kn,direction_deg\n2026-06-14T12:00:00Z,fast,245\n",
        ),
        &["wind.csv"],
    ),
    badf(
        "drift wind series times descending",
        File(
            "wind.csv",
            "time,speed_kn,direction_deg\n2026-06-15T00:00:00Z,10,265\n2026-06-14T12:00:00Z,12,245\n",
        ),
        &["wind.csv"],
    ),
    bad(
        "drift leeway slope missing",
        Replace("downwind_slope = 0.035, ", ""),
        &["downwind_slope"],
    ),
    bad(
        "drift leeway sigma negative",
        Replace("downwind_sigma_kn = 0.05", "downwind_sigma_kn = -0.05"),
        &["downwind_sigma_kn"],
    ),
    bad(
        "drift diffusivity negative",
        Replace(
            "particles = 20000",
            "particles = 20000\ndiffusivity_m2_s = -1",
        ),
        &["diffusivity_m2_s"],
    ),
    // --- searches
    bad(
        "search ends before it starts",
        Replace(
            "end = \"2026-06-14T22:00:00Z\"",
            "end = \"2026-06-14T19:00:00Z\"",
        ),
        &["end"],
    ),
    bad(
        "search sweep width zero",
        Replace(SWEEP, "sweep_width_m = 0"),
        &["sweep_width_m"],
    ),
    bad(
        "search sweep width negative",
        Replace(SWEEP, "sweep_width_m = -900"),
        &["sweep_width_m"],
    ),
    bad(
        "search detection unknown",
        Replace(
            "detection = \"inverse-cube\"\npattern",
            "detection = \"cookie-cutter\"\npattern",
        ),
        &["detection"],
    ),
    bad(
        "search pattern kind unknown",
        Replace("kind = \"parallel-sweep\"", "kind = \"zigzag\""),
        &["kind"],
    ),
    bad(
        "search pattern length zero",
        Replace(PATTERN, "length_m = 0"),
        &["length_m"],
    ),
    bad(
        "search pattern width negative",
        Replace("width_m = 4500", "width_m = -4500"),
        &["width_m"],
    ),
    bad(
        "search pattern spacing zero",
        Replace("track_spacing_m = 900 }", "track_spacing_m = 0 }"),
        &["track_spacing_m"],
    ),
    badf(
        "search track file missing",
        Replace(
            "track = \"tracks/helicopter-1.gpx\"",
            "track = \"tracks/none.gpx\"",
        ),
        &["none.gpx"],
    ),
    badf(
        "search track not GPX",
        File("tracks/helicopter-1.gpx", "<gpx"),
        &["helicopter-1.gpx"],
    ),
    bad(
        "search id repeated",
        Replace(
            "id = \"helicopter-1-drift-area\"",
            "id = \"boat-1-gull-point\"",
        ),
        &["boat-1-gull-point"],
    ),
    bad(
        "search with neither pattern nor track",
        Replace("track = \"tracks/helicopter-1.gpx\"", ""),
        &["track"],
    ),
    // --- units
    bad(
        "unit speed zero",
        Replace("speed_kn = 12", "speed_kn = 0"),
        &["speed_kn"],
    ),
    bad(
        "unit speed negative",
        Replace("speed_kn = 12", "speed_kn = -12"),
        &["speed_kn"],
    ),
    bad(
        "unit hours negative",
        Replace(
            "hours_on_scene = 4\nsweep_width_m = 900",
            "hours_on_scene = -4\nsweep_width_m = 900",
        ),
        &["hours_on_scene"],
    ),
    bad(
        "unit sweep width zero",
        Replace(
            "hours_on_scene = 1.5\nsweep_width_m = 1800",
            "hours_on_scene = 1.5\nsweep_width_m = 0",
        ),
        &["sweep_width_m"],
    ),
    bad(
        "unit id repeated",
        Replace("id = \"rescue-boat-2\"", "id = \"rescue-boat-1\""),
        &["rescue-boat-1"],
    ),
    bad(
        "unit unknown key",
        Replace(
            "track_spacing_min_m = 300",
            "track_spacing_min_m = 300\nallow_overlap = true",
        ),
        &["allow_overlap"],
    ),
    // --- whole file
    bad("not TOML", Append("[[scenario"), &["incident.toml"]),
    bad(
        "unknown top-level table",
        Append("\n[weather]\nwind = 3\n"),
        &["weather"],
    ),
    Row {
        name: "incident file missing",
        edit: Edit::None,
        run: Run::Check(&["{dir}/missing.toml"]),
        code: 2,
        words: &["missing.toml"],
        located: false,
    },
    Row {
        name: "incident path a folder",
        edit: Edit::None,
        run: Run::Check(&["{dir}"]),
        code: 2,
        words: &[],
        located: false,
    },
    // --- command-line arguments
    args(
        "map --at not a time",
        Run::Map(&["--at", "noon"]),
        &["--at", "RFC 3339"],
    ),
    args(
        "map --outputs unknown",
        Run::Map(&["--outputs", "probability,velocity"]),
        &["velocity"],
    ),
    args(
        "map --at without a zone",
        Run::Map(&["--at", "2026-06-14T12:00:00"]),
        &["--at", "RFC 3339"],
    ),
    args(
        "map --at a date only",
        Run::Map(&["--at", "2026-06-14"]),
        &["--at"],
    ),
    args(
        "plan --start not a time",
        Run::Plan(&["--start", "noon"]),
        &["--start", "RFC 3339"],
    ),
    args(
        "map --out is the incident's folder",
        Run::Map(&["--out", "{dir}", "--force"]),
        &["incident"],
    ),
    args(
        "map --out is the incident file",
        Run::Map(&["--out", "{dir}/incident.toml", "--force"]),
        &["incident.toml"],
    ),
    // Sizing: inputs that once passed check and failed in map, blaming cell_m.
    bad(
        "huge point sigma",
        Replace(POINT, "sigma_major_m = 1e12"),
        &["sigma_major_m", "bounds"],
    ),
    bad(
        "huge route sigma",
        Replace(ROUTE, "cross_track_sigma_m = 1e12"),
        &["cross_track_sigma_m", "bounds"],
    ),
    bad(
        "huge drift position sigma",
        Replace("position_sigma_m = 800", "position_sigma_m = 1e12"),
        &["position_sigma_m", "bounds"],
    ),
    bad(
        "huge current speed",
        Replace(
            DRIFT_CURRENT,
            "current = { speed_kn = 1e9, toward_deg = 75, speed_sigma_kn = 0.2, direction_sigma_deg = 20 }",
        ),
        &["speed_kn", "bounds"],
    ),
    bad(
        "huge diffusivity",
        Replace(
            "particles = 20000",
            "particles = 200\ndiffusivity_m2_s = 1e15",
        ),
        &["diffusivity_m2_s", "bounds"],
    ),
    bad(
        "huge sweep width",
        Replace(SWEEP, "sweep_width_m = 1e12"),
        &["sweep_width_m"],
    ),
    bad(
        "huge pattern length",
        Replace(PATTERN, "length_m = 1e12"),
        &["length_m"],
    ),
    bad(
        "huge ring radius",
        Append(
            "\n[[scenario]]\nid = \"rings\"\nanalyst = \"duty-officer\"\nkind = \"rings\"\nposition = [-40.9, 31.5]\ndistance_quantiles_km = { 50 = 1e9 }\n",
        ),
        &["distance_quantiles_km", "bounds"],
    ),
    bad(
        "huge particles",
        Replace("particles = 20000", "particles = 10000000000000"),
        &["particles"],
    ),
    bad(
        "max_cells raised past the machine",
        Replace(
            "cell_m = 250",
            "cell_m = 1\nmax_cells = 9000000000000000000",
        ),
        &["cell_m", "max_cells"],
    ),
    // Rows that held once the typed vocabulary and the input guards landed.
    Row {
        name: "incident path a FIFO",
        edit: Edit::Fifo("fifo.toml"),
        run: Run::Check(&["{dir}/fifo.toml"]),
        code: 2,
        words: &["fifo.toml", "regular file"],
        located: false,
    },
    bad(
        "reference time a number",
        Replace(
            "reference_time = \"2026-06-14T18:00:00Z\"",
            "reference_time = 5",
        ),
        &["reference_time"],
    ),
    bad(
        "object_afloat not a boolean",
        Replace("object_afloat = true", "object_afloat = \"yes\""),
        &["object_afloat"],
    ),
    bad(
        "cell size text",
        Replace("cell_m = 250", "cell_m = \"250\""),
        &["cell_m"],
    ),
    bad(
        "max_cells negative",
        Replace("cell_m = 250", "cell_m = 250\nmax_cells = -5"),
        &["max_cells"],
    ),
    bad(
        "point bearing text",
        Replace("major_bearing_deg = 60\n", "major_bearing_deg = \"NE\"\n"),
        &["major_bearing_deg"],
    ),
    bad(
        "point position one number",
        Replace("position = [-40.955, 31.548]", "position = [-40.955]"),
        &["position"],
    ),
    bad(
        "point position three numbers",
        Replace(
            "position = [-40.955, 31.548]",
            "position = [-40.955, 31.548, 3]",
        ),
        &["position"],
    ),
    bad(
        "point position text",
        Replace(
            "position = [-40.955, 31.548]",
            "position = \"-40.955, 31.548\"",
        ),
        &["position"],
    ),
    bad(
        "drift particles negative",
        Replace("particles = 20000", "particles = -1"),
        &["particles"],
    ),
    bad(
        "drift seed negative",
        Replace("seed = 7", "seed = -7"),
        &["seed"],
    ),
    bad(
        "position written [lat, lon]",
        Replace(
            "position = [-40.955, 31.548]",
            "position = [31.548, -40.955]",
        ),
        &["position", "[lon, lat]"],
    ),
    // Warnings and the errors that need an explicit key.
    warn(
        // Inside the invented Wrenhold Island of the demo coastline (lat 31.46-31.53).
        "object afloat with an area wholly on land",
        File(
            "areas/kestrel-bay.geojson",
            "{\"type\":\"Polygon\",\"coordinates\":[[[-41.01,31.49],[-40.99,31.49],[-40.99,31.505],[-41.01,31.505],[-41.01,31.49]]]}",
        ),
        Run::Map(&[]),
        &["warning", "land", "analyst"],
    ),
    bad(
        "wind series ending 36 h before the drift",
        File(
            "wind.csv",
            "time,speed_kn,direction_deg\n2026-06-12T12:00:00Z,12,245\n2026-06-13T03:00:00Z,10,265\n",
        ),
        &["wind", "hold_environment_beyond_series"],
    ),
    bad(
        "crs EPSG:32601 at 41 W",
        Replace(
            "object_afloat = true",
            "object_afloat = true\ncrs = \"EPSG:32601\"",
        ),
        &["crs", "allow_distant_crs"],
    ),
    warn(
        "searches ended before reference_time",
        Replace(
            "start = \"2026-06-14T19:30:00Z\"\nend = \"2026-06-14T22:00:00Z\"",
            "start = \"2026-06-14T09:30:00Z\"\nend = \"2026-06-14T12:00:00Z\"",
        ),
        Run::Check(&[]),
        &["warning", "reference_time"],
    ),
    warn(
        "map --at before the reference time",
        Edit::None,
        Run::Map(&["--at", "2026-06-14T12:00:00Z"]),
        &["warning", "--at"],
    ),
    warn(
        "drift starting after the map time",
        Edit::None,
        Run::Map(&["--at", "2026-06-14T14:00:00Z"]),
        &["warning", "adrift"],
    ),
    warn(
        "search wholly outside the grid",
        Replace("center = [-40.955, 31.548]", "center = [-30.955, 31.548]"),
        Run::Map(&[]),
        &["warning", "outside the grid"],
    ),
    Row {
        name: "year 9999 refused before any output",
        // The demo's outcome moves with the reference time, so that only the year is at fault.
        edit: Edit::Both(
            &Replace(
                "reference_time = \"2026-06-14T18:00:00Z\"",
                "reference_time = \"9999-12-31T18:00:00Z\"",
            ),
            &Replace(
                "time = \"2026-06-15T03:40:00Z\"",
                "time = \"9999-12-31T19:00:00Z\"",
            ),
        ),
        run: Run::Map(&[]),
        code: 2,
        words: &["reference_time"],
        located: true,
    },
    Row {
        name: "--strict turns a warning into an error",
        edit: Edit::None,
        run: Run::Map(&["--strict", "--at", "2026-06-14T12:00:00Z"]),
        code: 2,
        words: &["--at"],
        located: false,
    },
    // Typing slips and unreadable inputs.
    bad(
        "decimal comma in a position",
        Replace(
            "position = [-40.955, 31.548]",
            "position = [-40.955, 31,548]",
        ),
        &["position", "decimal point"],
    ),
    bad(
        "coastline /dev/zero",
        Replace("coastline = \"coast.geojson\"", "coastline = \"/dev/zero\""),
        &["coastline", "regular file"],
    ),
    Row {
        name: "coastline GeoJSON with a UTF-8 BOM is accepted",
        // A small invented island west of the demo's, written with a byte-order mark.
        edit: File(
            "coast.geojson",
            "\u{feff}{\"type\":\"FeatureCollection\",\"features\":[{\"type\":\"Feature\",\"properties\":{},\"geometry\":{\"type\":\"Polygon\",\"coordinates\":[[[-41.3,31.3],[-41.29,31.3],[-41.29,31.31],[-41.3,31.31],[-41.3,31.3]]]}}]}",
        ),
        run: Run::Check(&[]),
        code: 0,
        words: &[],
        located: false,
    },
    warn(
        "crs of the neighbouring UTM zone",
        Replace(
            "object_afloat = true",
            "object_afloat = true\ncrs = \"EPSG:32623\"",
        ),
        Run::Check(&[]),
        &["warning", "crs", "EPSG:32624"],
    ),
    Row {
        name: "a distant crs kept when the file says so",
        edit: Replace(
            "object_afloat = true",
            "object_afloat = true\ncrs = \"EPSG:32621\"\nallow_distant_crs = true",
        ),
        run: Run::Check(&[]),
        code: 0,
        words: &[],
        located: false,
    },
    Row {
        name: "a short wind series held when the file says so",
        edit: Edit::Both(
            &File(
                "wind.csv",
                "time,speed_kn,direction_deg\n2026-06-12T12:00:00Z,12,245\n2026-06-13T03:00:00Z,10,265\n",
            ),
            &Replace(
                "particles = 20000",
                "particles = 20000\nhold_environment_beyond_series = true",
            ),
        ),
        run: Run::Check(&[]),
        code: 0,
        words: &[],
        located: false,
    },
    Row {
        name: "check --strict refuses a search ended before reference_time",
        edit: Replace(
            "start = \"2026-06-14T19:30:00Z\"\nend = \"2026-06-14T22:00:00Z\"",
            "start = \"2026-06-14T09:30:00Z\"\nend = \"2026-06-14T12:00:00Z\"",
        ),
        run: Run::Check(&["--strict"]),
        code: 2,
        words: &["warning", "reference_time", "--strict"],
        located: true,
    },
    bad(
        "a time in the year 3026",
        Replace(
            "reference_time = \"2026-06-14T18:00:00Z\"",
            "reference_time = \"3026-06-14T18:00:00Z\"",
        ),
        &["reference_time", "check the year"],
    ),
];

/// Words no message may show: Rust type names, settings the file does not accept, and
/// internal-error wording.
const FORBIDDEN: &[&str] = &[
    "f64",
    "u64",
    "usize",
    "untagged enum",
    "TimeText",
    "record_every_s",
    "please report",
    "panicked",
    "RUST_BACKTRACE",
];

/// Copies the marine demo into a fresh folder, with fewer particles so rows that map are quick.
fn valid_incident(root: &Path) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../scenarios/marine");
    let dir = root.join("incident");
    copy_dir(&src, &dir);
    let toml = dir.join("incident.toml");
    let text = std::fs::read_to_string(&toml).unwrap();
    std::fs::write(&toml, text.replace("particles = 20000", "particles = 400")).unwrap();
    dir
}

fn copy_dir(src: &Path, dst: &Path) {
    std::fs::create_dir_all(dst).unwrap();
    for e in std::fs::read_dir(src).unwrap() {
        let e = e.unwrap();
        let to = dst.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &to);
        } else {
            std::fs::copy(e.path(), to).unwrap();
        }
    }
}

fn apply(edit: &Edit, dir: &Path) -> Result<(), String> {
    let toml = dir.join("incident.toml");
    match *edit {
        Edit::None => {}
        Edit::Replace(from, to) => {
            // The valid copy has 400 particles; rows are written against the demo text.
            let from = if from.contains("particles = 20000") {
                from.replace("particles = 20000", "particles = 400")
            } else {
                from.to_owned()
            };
            let text = std::fs::read_to_string(&toml).unwrap();
            if !text.contains(&from) {
                return Err(format!("the valid incident has no text {from:?}"));
            }
            std::fs::write(&toml, text.replacen(&from, to, 1)).unwrap();
        }
        Edit::Append(more) => {
            let text = std::fs::read_to_string(&toml).unwrap();
            std::fs::write(&toml, text + more).unwrap();
        }
        Edit::File(name, content) => std::fs::write(dir.join(name), content).unwrap(),
        Edit::Fifo(name) => {
            let status = Command::new("mkfifo").arg(dir.join(name)).status();
            if !status.is_ok_and(|s| s.success()) {
                return Err("mkfifo failed".to_owned());
            }
        }
        Edit::Both(a, b) => {
            apply(a, dir)?;
            apply(b, dir)?;
        }
    }
    Ok(())
}

/// Runs one row in its own folder; `Err` says what did not hold.
fn run_row(row: &Row) -> Result<(), String> {
    let root = tempfile::tempdir().unwrap();
    let dir = valid_incident(root.path());
    apply(&row.edit, &dir)?;
    let out = root.path().join("out");
    let file = dir.join("incident.toml");
    let land = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../scenarios/land/incident.toml");
    let subst = |a: &str| {
        a.replace("{dir}", dir.to_str().unwrap())
            .replace("{land}", land.to_str().unwrap())
    };
    let (command, extra) = match row.run {
        Run::Check(a) => ("check", a),
        Run::Map(a) => ("map", a),
        Run::Plan(a) => ("plan", a),
    };
    let mut argv = vec![command.to_owned()];
    // A row naming its own incident path gives it first.
    let own_path = command == "check" && extra.first().is_some_and(|a| a.starts_with('{'));
    if !own_path {
        argv.push(file.to_str().unwrap().to_owned());
    }
    let has_out = extra.contains(&"--out");
    let mut extra: Vec<String> = extra.iter().map(|a| subst(a)).collect();
    if command == "plan" && !extra.contains(&"--start".to_owned()) {
        extra.extend(["--start".to_owned(), "2026-06-15T06:00:00Z".to_owned()]);
    }
    argv.extend(extra);
    if command != "check" && !has_out {
        argv.extend(["--out".to_owned(), out.to_str().unwrap().to_owned()]);
    }
    // A snapshot of the incident folder: an output must never land in it.
    let before = listing(&dir);
    let (code, stderr) = run_bounded(&argv, &root.path().join("stderr.txt"))?;
    let mut wrong = Vec::new();
    if code != Some(row.code) {
        wrong.push(format!("exit {code:?}, expected {}", row.code));
    }
    let lower = stderr.to_lowercase();
    for w in row.words {
        if !lower.contains(&w.to_lowercase()) {
            wrong.push(format!("message lacks {w:?}"));
        }
    }
    for w in FORBIDDEN {
        if stderr.contains(w) {
            wrong.push(format!("message shows {w:?}"));
        }
    }
    if row.located && !has_location(&stderr) {
        wrong.push("message has no incident.toml:LINE:COL".to_owned());
    }
    if row.code != 0 && out.exists() {
        wrong.push("an output folder was created".to_owned());
    }
    if listing(&dir) != before {
        wrong.push("the incident folder changed".to_owned());
    }
    // One message per fault: no line printed twice.
    let lines: Vec<&str> = stderr.lines().filter(|l| !l.trim().is_empty()).collect();
    for (i, l) in lines.iter().enumerate() {
        if lines[..i].contains(l) && l.contains("seekgrid") {
            wrong.push(format!("line printed twice: {l}"));
            break;
        }
    }
    if wrong.is_empty() {
        Ok(())
    } else {
        Err(format!(
            "{}\n    stderr: {}",
            wrong.join("; "),
            stderr.trim()
        ))
    }
}

/// Runs the binary with `argv`, its standard error into `log`, for at most a minute (a row
/// that would hang, such as reading a FIFO, is killed and reported). Returns the exit code
/// (None when killed) and standard error.
fn run_bounded(argv: &[String], log: &Path) -> Result<(Option<i32>, String), String> {
    let err = std::fs::File::create(log).map_err(|e| e.to_string())?;
    let mut child = Command::new(env!("CARGO_BIN_EXE_seekgrid"))
        .args(argv)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(err)
        .spawn()
        .map_err(|e| e.to_string())?;
    let began = std::time::Instant::now();
    let code = loop {
        if let Some(status) = child.try_wait().map_err(|e| e.to_string())? {
            break status.code();
        }
        if began.elapsed() > std::time::Duration::from_secs(60) {
            let _ = child.kill();
            let _ = child.wait();
            return Err("still running after 60 s; killed".to_owned());
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    };
    Ok((code, std::fs::read_to_string(log).unwrap_or_default()))
}

/// Whether `text` carries `incident.toml:LINE:COL`.
fn has_location(text: &str) -> bool {
    text.match_indices("incident.toml:").any(|(i, m)| {
        let rest = &text[i + m.len()..];
        let mut parts = rest.splitn(3, ':');
        let line = parts.next().unwrap_or("");
        let col = parts.next().unwrap_or("");
        !line.is_empty()
            && line.chars().all(|c| c.is_ascii_digit())
            && !col.is_empty()
            && col.chars().all(|c| c.is_ascii_digit())
    })
}

fn listing(dir: &Path) -> Vec<(PathBuf, u64)> {
    let mut v = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let e = e.unwrap();
            let m = std::fs::symlink_metadata(e.path()).unwrap();
            if m.is_dir() {
                stack.push(e.path());
            }
            v.push((e.path(), if m.is_file() { m.len() } else { 0 }));
        }
    }
    v.sort();
    v
}

#[test]
fn catalogue_of_bad_inputs_is_refused_with_a_located_message_naming_the_field() {
    assert!(CASES.len() >= 120, "the catalogue has at least 120 rows");
    let failures: Vec<String> = CASES
        .iter()
        .filter_map(|row| run_row(row).err().map(|e| format!("{}: {e}", row.name)))
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} rows failed:\n{}",
        failures.len(),
        CASES.len(),
        failures.join("\n")
    );
}
