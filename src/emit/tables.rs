//! The human-readable tables of `predict`.

use crate::math::hz_label;
use crate::physics::electric_probe::ElectricResponse;
use crate::physics::on_fixture::{ElectricOnFixture, OnFixture};

/// An electric probe's lines over a fixture.
fn electric_on_fixture(o: &mut String, c: &ElectricOnFixture) {
    o.push_str(&format!(
        "  on fixture {}, face {} mm over the line (held flat, electrode centred):\n",
        c.fixture, c.height_mm
    ));
    o.push_str(&format!(
        "  {:<22} {:.2} fF; field over the electrode {:.1} V/m per volt on the line\n",
        "line to electrode",
        c.coupling_f * 1e15,
        c.e_per_volt
    ));
    o.push_str("  predicted S21, line input to probe (dB, degrees):\n");
    let step = (c.s21.len() / 10).max(1);
    for (j, (f, db, deg)) in c.s21.iter().enumerate() {
        if j % step == 0 || j + 1 == c.s21.len() {
            o.push_str(&format!("    {:>12} {db:>7.2}  {deg:>7.1}\n", hz_label(*f)));
        }
    }
}
use crate::physics::predicted::{ASSUMPTIONS, Predicted, ProbeResponse};

/// An electric probe's table.
fn electric_table(o: &mut String, x: &Predicted, r: &ElectricResponse) {
    o.push_str(&format!(
        "{} — electric-field probe, {}\n",
        x.probe.name,
        x.probe.size_text()
    ));
    let line = |o: &mut String, k: &str, v: String| o.push_str(&format!("  {k:<22} {v}\n"));
    line(
        o,
        "collecting area",
        format!(
            "{:.2} mm² (radius {:.3} mm: the disc and half its clearance)",
            r.area_eff_m2 * 1e6,
            r.r_eff_m * 1e3
        ),
    );
    line(
        o,
        "self-capacitance",
        format!(
            "{:.3} pF (both faces, εr {:.2} under them; estimate)",
            r.c_self * 1e12,
            r.er_outer
        ),
    );
    line(
        o,
        "corner",
        format!(
            "{} (above it the output stops rising)",
            hz_label(r.corner_hz)
        ),
    );
    line(
        o,
        "upper usable frequency",
        format!("{} ({})", hz_label(r.upper_hz), r.upper_rule),
    );
    line(
        o,
        "to the trace",
        format!(
            "{:.2} fF from a 50 Ω microstrip {} mm over its plane (w = {:.2} mm), face {} mm \
             above it",
            r.coupling_f * 1e15,
            r.options.trace_h_mm,
            r.trace.width,
            r.options.height_mm
        ),
    );
    line(
        o,
        "resolution (−6 dB)",
        match r.resolution_m {
            Some(w) => format!("{:.2} mm across that trace", w * 1e3),
            None => "beyond the profile (no −6 dB point)".to_string(),
        },
    );
    o.push_str(
        "  electric probe factor (dB(1/m), the probe held flat, E normal to its face, 50 Ω) and \
         output per volt on the trace below (dB):\n",
    );
    let step = (r.factor.len() / 10).max(1);
    for (i, ((f, d), (_, v))) in r.factor.iter().zip(&r.output_per_volt).enumerate() {
        if i % step == 0 || i + 1 == r.factor.len() {
            o.push_str(&format!(
                "    {:>12} {d:>7.2}  {v:>7.2}{}\n",
                hz_label(*f),
                if *f > r.upper_hz {
                    "  above the usable band"
                } else {
                    ""
                }
            ));
        }
    }
}

/// The human-readable tables; `couplings` holds each probe's coupling to a fixture, in the
/// same order (empty: none asked).
pub fn tables(all: &[Predicted], couplings: &[OnFixture]) -> String {
    let mut o = String::new();
    for (i, x) in all.iter().enumerate() {
        let r = match &x.response {
            ProbeResponse::Loop(r) => r,
            ProbeResponse::Electric(r) => {
                electric_table(&mut o, x, r);
                if let Some(OnFixture::Electric(c)) = couplings.get(i) {
                    electric_on_fixture(&mut o, c);
                }
                o.push('\n');
                continue;
            }
        };
        o.push_str(&format!(
            "{} — {}{} loop, {}\n",
            x.probe.name,
            x.probe.loop_label(),
            x.probe.shape_name(),
            x.probe.size_text()
        ));
        if r.balanced.is_some() {
            o.push_str(
                "  two outputs, read through an ideal 180° hybrid: the difference Δ = (a − b)/√2 \
                 (magnetic; the figures below) and the sum Σ = (a + b)/√2 (electric)\n",
            );
        }
        let line = |o: &mut String, k: &str, v: String| o.push_str(&format!("  {k:<22} {v}\n"));
        line(&mut o, "loop area", format!("{:.2} mm²", r.area_m2 * 1e6));
        line(
            &mut o,
            "effective area",
            format!(
                "{:.2} mm² ({:.3} of the centreline's: the shield's current crowds inwards)",
                r.area_eff_m2 * 1e6,
                r.area_eff_m2 / r.area_m2
            ),
        );
        line(
            &mut o,
            "with the handle",
            format!(
                "{:.2} mm² in a uniform field ({:+.2} dB: the handle's shield diverts flux \
                 through the loop)",
                r.area_uniform_m2() * 1e6,
                r.local_field_db()
            ),
        );
        if let Some(wd) = &r.winding {
            line(
                &mut o,
                "inductance",
                format!(
                    "{:.2} nH ({}² × outer loop {:.2} nH + the winding's line {:.2} nH)",
                    r.l_total * 1e9,
                    wd.turns,
                    r.l_outer * 1e9,
                    r.l_stub * 1e9
                ),
            );
            line(
                &mut o,
                "winding",
                format!(
                    "{} turns on L{}–L{}, {:.1} Ω per turn together (common mode), {:.3} pF \
                     between neighbouring turns (all pairs); self-resonance at the output {}",
                    wd.turns,
                    x.probe.signal_layer,
                    x.probe.signal_layer + wd.turns as usize - 1,
                    wd.z_common,
                    wd.c_turns * 1e12,
                    hz_label(wd.self_resonance_hz)
                ),
            );
        } else {
            line(
                &mut o,
                "inductance",
                format!(
                    "{:.2} nH (outer loop {:.2} nH + inner stub {:.2} nH{})",
                    r.l_total * 1e9,
                    r.l_outer * 1e9,
                    r.l_stub * 1e9,
                    if r.balanced.is_some() {
                        ", one at each of the two gaps"
                    } else {
                        ""
                    }
                ),
            );
        }
        line(&mut o, "low-frequency corner", hz_label(r.corner_hz));
        line(
            &mut o,
            "upper usable frequency",
            format!("{} ({})", hz_label(r.upper_hz), r.upper_rule),
        );
        line(
            &mut o,
            "error budget (1 dB)",
            match r.budget_hz {
                Some(b) if r.winding.is_some() => format!(
                    "reached at {} (electric pickup at 20° tilt + winding length ±5 % + \
                     turn-to-turn capacitance ±10 %)",
                    hz_label(b)
                ),
                Some(b) => format!(
                    "reached at {} (electric pickup at 20° tilt + stub length ±5 %)",
                    hz_label(b)
                ),
                None if r.balanced.is_some() => {
                    "not evaluated (Δ: no first-order electric pickup, no stub null)".to_string()
                }
                None => "not reached below the first null".to_string(),
            },
        );
        for (rule, f) in &r.quoted_limits {
            line(
                &mut o,
                "  quoted limit",
                format!("{}: {rule}", hz_label(*f)),
            );
        }
        line(
            &mut o,
            "resolution (−6 dB)",
            format!(
                "{:.2} mm across a trace {} mm over its plane, tip {} mm above it",
                r.resolution_m * 1e3,
                r.options.trace_h_mm,
                r.options.height_mm
            ),
        );
        line(
            &mut o,
            "mutual to the trace",
            format!("{:.3} nH", r.mutual * 1e9),
        );
        if let Some(l) = &r.launch {
            line(
                &mut o,
                "connector launch",
                format!(
                    "worst return loss {:.1} dB at {} up to f_max {} (limit {} dB); \
                     probe factor changed by at most {:+.2} dB below the upper usable \
                     frequency{} (not included above)",
                    l.s11.worst_db,
                    hz_label(l.s11.worst_hz),
                    hz_label(l.f_max_hz),
                    x.probe.connector.return_loss_limit_db,
                    l.pf_below_upper.1,
                    match l.pf_to_fmax {
                        Some((_, d)) => format!(", {d:+.2} dB from there to f_max"),
                        None => String::new(),
                    }
                ),
            );
        }
        if let Some(bal) = &r.balanced {
            o.push_str(
                "  probe factor of Δ (dB(S/m), uniform H, 50 Ω) and electric factor of Σ (dB(1/m), \
                 uniform E along the axis, 50 Ω; Δ holds no electric pickup to first order):\n",
            );
            let step = (r.probe_factor.len() / 10).max(1);
            for (i, ((f, d), (_, e))) in r.probe_factor.iter().zip(&bal.e_factor).enumerate() {
                if i % step == 0 || i + 1 == r.probe_factor.len() {
                    o.push_str(&format!(
                        "    {:>12} {:>7.2}  {e:>7.2}{}\n",
                        crate::math::hz_label(*f),
                        d,
                        if *f > r.upper_hz {
                            "  above the usable band"
                        } else {
                            ""
                        }
                    ));
                }
            }
        }
        if r.balanced.is_none() {
            o.push_str(
                "  probe factor (dB(S/m), uniform H, 50 Ω) and E-rejection (dB, worst case: E \
                 across the axis, E/H = η0):\n",
            );
        }
        let step = (r.probe_factor.len() / 10).max(1);
        for (i, ((f, d), (_, e))) in r.probe_factor.iter().zip(&r.e_rejection).enumerate() {
            if r.balanced.is_none() && (i % step == 0 || i + 1 == r.probe_factor.len()) {
                o.push_str(&format!(
                    "    {:>12} {:>7.2}  {e:>6.1}{}\n",
                    crate::math::hz_label(*f),
                    d,
                    if *f > r.upper_hz {
                        "  above the usable band"
                    } else {
                        ""
                    }
                ));
            }
        }
        if let Some(OnFixture::Loop(c)) = couplings.get(i) {
            let k = &c.coupling;
            o.push_str(&format!(
                "  on fixture {}, tip {} mm over the line (loop plane along it):\n",
                c.fixture, c.height_mm
            ));
            line(
                &mut o,
                "mutual inductance",
                format!(
                    "{:.2} pH (strip as a sheet; {:.2} pH as a filament)",
                    k.mutual * 1e12,
                    k.mutual_filament * 1e12
                ),
            );
            line(
                &mut o,
                "field per ampere",
                format!(
                    "{:.3} A/m area-average, {:.3} A/m at the loop's centre",
                    k.h_avg_per_amp, k.h_centre_per_amp
                ),
            );
            o.push_str(&format!(
                "  predicted S21, line input to probe (dB, degrees), and E-rejection over the line \
                 (dB, its field across the axis, E/H = {:.0} Ω):\n",
                c.line_wave_ohm
            ));
            for (j, ((f, db, deg), e)) in c.s21.iter().zip(&c.e_rejection_db).enumerate() {
                if j % step == 0 || j + 1 == c.s21.len() {
                    // (A balanced loop's difference: no E-rejection predicted.)
                    let e = if e.is_finite() {
                        format!("{e:>6.1}")
                    } else {
                        format!("{:>6}", "—")
                    };
                    o.push_str(&format!(
                        "    {:>12} {db:>7.2}  {deg:>7.1}  {e}\n",
                        hz_label(*f)
                    ));
                }
            }
        }
        o.push('\n');
    }
    o.push_str("Assumptions:\n");
    for a in ASSUMPTIONS {
        o.push_str(&format!("  - {a}\n"));
    }
    if all
        .iter()
        .any(|x| x.probe.kind == crate::model::probe::ProbeKind::Balanced)
    {
        for a in crate::physics::predicted::BALANCED_ASSUMPTIONS {
            o.push_str(&format!("  - {a}\n"));
        }
    }
    if all.iter().any(|x| x.probe.turns > 1) {
        for a in crate::physics::predicted::WINDING_ASSUMPTIONS {
            o.push_str(&format!("  - {a}\n"));
        }
    }
    o.push_str(&format!("\n{}\n", crate::emit::cautions::CAUTIONS));
    o
}
