//! Writes the geometry of a demo probe's connector launch as JSON, for the full-wave
//! reference script `tests/reference/launch_fdtd.py` (run outside CI).
//!
//! Run: `cargo run --release --example launch_geometry -- [probe] [stackup] [signal layer]
//! > launch.json` (defaults: FM-R10 on the demo's own stackup and layer), or
//! `... -- fixture > fixture.json` for the demo fixture's ports and network. Coordinates in
//! mm, the board's own (origin at the loop centre, connector edge at `edge_y`). The JSON is
//! built in `tests/common/launch_json.rs`, shared with `tests/launch_fdtd.rs`.

#[path = "../tests/common/launch_json.rs"]
mod launch_json;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let out = if args.get(1).map(String::as_str) == Some("fixture") {
        launch_json::fixture_json()
    } else {
        launch_json::probe_json(
            args.get(1).map(String::as_str).unwrap_or("FM-R10"),
            args.get(2).map(String::as_str),
            args.get(3).map(String::as_str),
        )
    };
    println!("{}", serde_json::to_string_pretty(&out).unwrap());
}
