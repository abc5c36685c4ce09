//! The JSON object of a predicted probe: `predict --json` prints it and the family report embeds
//! it, so both carry the same numbers.

use crate::physics::Response;
use crate::physics::electric_probe::ElectricResponse;
use crate::physics::on_fixture::{FixtureCoupling, OnFixture};
use crate::physics::predicted::{Predicted, ProbeResponse};
use crate::physics::probe_factor_at;
use serde_json::{Value, json};

/// The JSON object of one probe, by its kind; every kind gives `kind` and `turns`.
pub fn probe_json(x: &Predicted) -> Value {
    let mut v = match &x.response {
        ProbeResponse::Loop(r) => loop_json(x, r),
        ProbeResponse::Electric(r) => electric_json(x, r),
    };
    // What the probe is (the keys sort into place: the map is ordered by key).
    v["kind"] = json!(x.probe.kind.name());
    v["turns"] = json!(x.probe.turns);
    v
}

/// An electric probe's JSON object.
fn electric_json(x: &Predicted, r: &ElectricResponse) -> Value {
    json!({
        "name": x.probe.name,
        "shape": x.probe.shape_name(),
        "size": x.probe.size_text(),
        "electrode_diameter_mm": r.electrode.diameter,
        "electrode_clearance_mm": r.electrode.clearance,
        "collecting_radius_mm": r.r_eff_m * 1e3,
        "collecting_area_mm2": r.area_eff_m2 * 1e6,
        "self_capacitance_pf": r.c_self * 1e12,
        "corner_hz": r.corner_hz,
        "upper_hz": r.upper_hz,
        "upper_rule": r.upper_rule,
        "f_small_electrode_hz": r.f_small_hz,
        "coupling_capacitance_ff": r.coupling_f * 1e15,
        "coupling_trace_width_mm": r.trace.width,
        "resolution_mm": r.resolution_m.map(|m| m * 1e3),
        "resolution_height_mm": r.options.height_mm,
        "trace_height_mm": r.options.trace_h_mm,
        "field_reference": "E normal to the probe's face, the probe held flat, into 50 Ω; E[dBµV/m] = V[dBµV] + factor[dB(1/m)]",
        "coupling_reference": "a 50 Ω microstrip on εr 4.3 at trace_height_mm over its plane, the face resolution_height_mm above its copper, the electrode centred over it",
        "electric_factor": r.factor.iter().map(|(f, d)| json!({"freq_hz": f, "db_per_m": d, "above_band": *f > r.upper_hz})).collect::<Vec<_>>(),
        "output_per_volt": r.output_per_volt.iter().map(|(f, d)| json!({"freq_hz": f, "db": d})).collect::<Vec<_>>(),
    })
}

/// A loop's JSON object.
fn loop_json(x: &Predicted, r: &Response) -> Value {
    let pf_at = |f: f64| probe_factor_at(&x.probe, &x.solved, r, f);
    let launch = r.launch.as_ref().map(|l| {
        let sl = &x.solved.launch;
        json!({
            "return_loss_worst_db": l.s11.worst_db,
            "return_loss_worst_hz": l.s11.worst_hz,
            "return_loss_limit_db": x.probe.connector.return_loss_limit_db,
            "f_max_hz": l.f_max_hz,
            "pf_effect_below_upper_db": l.pf_below_upper.1,
            "pf_effect_below_upper_hz": l.pf_below_upper.0,
            "pf_effect_to_fmax_db": l.pf_to_fmax.map(|x| x.1),
            "pf_effect_to_fmax_hz": l.pf_to_fmax.map(|x| x.0),
            "centre_pad_z0_ohms": sl.pad_z0,
            "centre_pad_gap_mm": sl.pad_gap,
            "relief_layers": sl.relieved_layers().collect::<Vec<_>>(),
            "link_width_mm": sl.link_width,
            "link_z0_ohms": sl.link_z0,
            "link_method": sl.link_method.name(),
            "antipad_mm": sl.antipad_d,
            "barrel_antipad_mm": sl.barrel_antipad_d,
            "stub_antipad_mm": sl.stub_antipad_d,
            "s11_db": l.s11.s11_db.iter().map(|(f, d)| json!({"freq_hz": f, "db": d})).collect::<Vec<_>>(),
        })
    });
    let mut out = json!({
        "name": x.probe.name,
        "shape": x.probe.shape_name(),
        "size": x.probe.size_text(),
        "loop_area_mm2": r.area_m2 * 1e6,
        "effective_area_mm2": r.area_eff_m2 * 1e6,
        "gap_area_mm2": r.gap_area_m2 * 1e6,
        "gap_inductance_nh": r.gap_l_outer * 1e9,
        "handle_area_mm2": r.handle_area_m2 * 1e6,
        "outer_inductance_gmd_nh": r.l_outer_gmd * 1e9,
        "gap_capacitance_pf": r.c_gap * 1e12,
        "gap_resonance_hz": r.f_gap_res_hz,
        "inductance_nh": r.l_total * 1e9,
        "outer_inductance_nh": r.l_outer * 1e9,
        "stub_inductance_nh": r.l_stub * 1e9,
        "gmd_mm": r.gmd_m * 1e3,
        "corner_hz": r.corner_hz,
        "upper_hz": r.upper_hz,
        "upper_rule": r.upper_rule,
        "f_small_loop_hz": r.f_small_loop_hz,
        "f_null_hz": r.f_null_hz,
        "resolution_mm": r.resolution_m * 1e3,
        "resolution_height_mm": r.options.height_mm,
        "trace_height_mm": r.options.trace_h_mm,
        "mutual_nh": r.mutual * 1e9,
        "field_reference": "uniform H normal to the loop, into 50 Ω; for a field confined under the tip (over a trace) add local_field_db for its area-average over the loop's own effective area",
        "local_field_db": r.local_field_db(),
        "pf_10mhz_db_s_per_m": pf_at(10e6),
        "pf_100mhz_db_s_per_m": pf_at(100e6),
        "pf_1ghz_db_s_per_m": pf_at(1e9),
        "upper_budget_hz": r.budget_hz,
        "upper_budget_db": crate::physics::electric::BUDGET_DB,
        "upper_quoted_limits": r.quoted_limits.iter().map(|(k, f)| json!({"rule": k, "hz": f})).collect::<Vec<_>>(),
        "e_field_reference": "worst case: E across the loop's axis in its plane, wave impedance E/H = η0 (376.7 Ω); dB re the magnetic response; E along the axis is ideally rejected by symmetry (residual not predicted)",
        "e_rejection_db": r.e_rejection.iter().map(|(f, d)| json!({"freq_hz": f, "db": d})).collect::<Vec<_>>(),
        "probe_factor": r.probe_factor.iter().zip(&r.e_rejection).map(|((f, d), (_, e))| json!({"freq_hz": f, "db_s_per_m": d, "e_rejection_db": e, "above_band": *f > r.upper_hz})).collect::<Vec<_>>(),
        "output_per_amp": r.output_per_amp.iter().map(|(f, d)| json!({"freq_hz": f, "db_ohm": d})).collect::<Vec<_>>(),
        "launch": launch,
    });
    if let (Some(wd), Some(sw), Some(o)) = (&r.winding, &x.solved.winding, out.as_object_mut()) {
        // A multi-turn loop: its winding; gap_resonance_hz is its self-resonance.
        let widths: Vec<f64> = std::iter::once(x.solved.trace_width)
            .chain(sw.lines.iter().map(|l| l.width))
            .collect();
        o.insert("self_resonance_hz".into(), json!(wd.self_resonance_hz));
        o.insert(
            "winding".into(),
            json!({
                "layers": x.probe.turn_layers().collect::<Vec<_>>(),
                "widths_mm": widths,
                "z_common_ohms": wd.z_common,
                "eps_common": wd.eps_common,
                "turn_capacitance_pf": wd.c_turns * 1e12,
                "line_mm": wd.line_m() * 1e3,
                "outer_inductance_times_turns_squared_nh": wd.n() * wd.n() * r.l_outer * 1e9,
                "joins_mm": sw.junction.joins.iter().map(|q| [q.x, q.y]).collect::<Vec<_>>(),
            }),
        );
    }
    if let (Some(b), Some(o)) = (&r.balanced, out.as_object_mut()) {
        // A balanced loop: the figures above are its outputs' difference through an ideal
        // 180° hybrid; the sum's electric factor beside them.
        o.insert("outputs".into(), json!("difference Δ = (a − b)/√2 (magnetic) and sum Σ = (a + b)/√2 (electric) through an ideal 180° hybrid; probe_factor is Δ's"));
        o.insert("stub_mm".into(), json!(b.stub_m * 1e3));
        o.insert("e_response_reference".into(), json!("uniform E along the loop's axis in its plane, Σ into 50 Ω: E[dBµV/m] = V_Σ[dBµV] + db_per_m"));
        o.insert(
            "e_response".into(),
            json!(
                b.e_factor
                    .iter()
                    .map(
                        |(f, d)| json!({"freq_hz": f, "db_per_m": d, "above_band": *f > r.upper_hz})
                    )
                    .collect::<Vec<_>>()
            ),
        );
    }
    out
}
/// The JSON object of a probe's coupling to a fixture, by its kind.
pub fn on_fixture_json(c: &OnFixture) -> Value {
    match c {
        OnFixture::Loop(c) => coupling_json(c),
        OnFixture::Electric(c) => json!({
            "fixture": c.fixture,
            "height_mm": c.height_mm,
            "coupling_capacitance_ff": c.coupling_f * 1e15,
            "e_per_volt_per_m": c.e_per_volt,
            "line_z0_ohms": c.line_z0,
            "field_reference": "E normal to the face averaged over the electrode's collecting area, E = C_c·V_line/(ε0·A_eff); V_line the line voltage under the probe from the fixture's launch model",
            "s21": c.s21.iter().zip(&c.line_voltage_db).map(|((f, db, deg), v)| json!({"freq_hz": f, "db": db, "deg": deg, "line_voltage_db": v})).collect::<Vec<_>>(),
        }),
    }
}

/// The JSON object of a loop's fixture coupling.
pub fn coupling_json(c: &FixtureCoupling) -> Value {
    let k = &c.coupling;
    json!({
        "fixture": c.fixture,
        "height_mm": c.height_mm,
        "mutual_ph": k.mutual * 1e12,
        "mutual_filament_ph": k.mutual_filament * 1e12,
        "h_avg_per_amp": k.h_avg_per_amp,
        "h_centre_per_amp": k.h_centre_per_amp,
        "field_reference": "area-average Hx over the loop; I = k·V_inc/50 Ω, k from the fixture's launch model",
        "e_field_reference": format!("worst case: the line's electric field across the loop's axis, E/H = η0/√εeff = {:.1} Ω (estimate); dB re the magnetic response; centred in the usual orientation the probe ideally rejects it by symmetry", c.line_wave_ohm),
        "s21": c.s21.iter().zip(&c.line_current_db).zip(&c.e_rejection_db).map(|(((f, db, deg), k), e)| json!({"freq_hz": f, "db": db, "deg": deg, "line_current_db": k, "e_rejection_db": e})).collect::<Vec<_>>(),
    })
}
