//! Excellon (XNC subset) drill files: metric, explicit decimal points, plated and non-plated
//! holes in separate files, the X2 file function and per-tool function in `; #@!` comments.

use crate::artwork::{Drill, Mechanical};
use std::fmt::Write;

/// One drill file. `plated` selects the holes and the file function.
pub fn drill_file(drills: &[Drill], plated: bool, copper_layers: usize) -> String {
    let holes: Vec<&Drill> = drills.iter().filter(|d| d.plated == plated).collect();
    let mut tools: Vec<(f64, bool, Option<Mechanical>)> = Vec::new();
    for d in &holes {
        if !tools
            .iter()
            .any(|(t, v, m)| *t == d.d && *v == d.via && *m == d.mechanical)
        {
            tools.push((d.d, d.via, d.mechanical));
        }
    }
    tools.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
    let mut s = String::new();
    s.push_str("M48\n");
    let _ = writeln!(
        s,
        "; #@! TF.GenerationSoftware,loopwright project,loopwright,{}",
        env!("CARGO_PKG_VERSION")
    );
    if plated {
        let _ = writeln!(s, "; #@! TF.FileFunction,Plated,1,{copper_layers},PTH");
    } else {
        let _ = writeln!(s, "; #@! TF.FileFunction,NonPlated,1,{copper_layers},NPTH");
    }
    s.push_str("METRIC\n");
    for (i, (d, via, mech)) in tools.iter().enumerate() {
        let function = match (plated, via, mech) {
            (_, _, Some(Mechanical::Tooling)) => "NonPlated,NPTH,MechanicalDrill,Tooling",
            (_, _, Some(Mechanical::BreakOut)) => "NonPlated,NPTH,MechanicalDrill,Breakout",
            (true, true, None) => "Plated,PTH,ViaDrill",
            (true, false, None) => "Plated,PTH,ComponentDrill",
            (false, _, None) => "NonPlated,NPTH,ComponentDrill",
        };
        let _ = writeln!(s, "; #@! TA.AperFunction,{function}");
        let _ = writeln!(s, "T{:02}C{:.3}", i + 1, d);
    }
    if holes.is_empty() {
        s.push_str("; no holes of this kind on this board\n");
    }
    s.push_str("%\nG05\n");
    for (i, (d, via, mech)) in tools.iter().enumerate() {
        let _ = writeln!(s, "T{:02}", i + 1);
        for h in holes
            .iter()
            .filter(|h| h.d == *d && h.via == *via && h.mechanical == *mech)
        {
            let _ = writeln!(s, "X{:.4}Y{:.4}", h.at.x, h.at.y);
        }
    }
    s.push_str("M30\n");
    s
}

/// The `TF.FileFunction` value an Excellon file carries in its `; #@! ` comment
/// (`Plated,1,4,PTH`).
pub fn file_function_text(text: &str) -> String {
    text.lines()
        .find_map(|l| l.strip_prefix("; #@! TF.FileFunction,"))
        .map(|s| s.trim().to_string())
        .unwrap_or_default()
}
