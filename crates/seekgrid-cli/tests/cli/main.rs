//! Tests of the `seekgrid` binary and of the working frame against the outside world, as one
//! test binary with a module per topic.

mod catalogue;
mod credibility;
mod date_line;
mod end_to_end;
mod external;
mod forecast;
mod frame_vs_proj;
mod golden;
mod gps;
mod kml;
mod layers;
mod located;
mod log;
mod output_folder;
mod provenance;
mod rasters;
mod review;
mod warnings;
