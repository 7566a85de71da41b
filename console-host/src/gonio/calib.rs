//! `mwctl calc fit`: calibration fits of measured CSV data with the core's models.

use super::*;

// ---------------------------------------------------------------------------------------
// fit

/// One data line of a CSV file: its 1-based line number and the required columns' text.
pub(crate) struct CsvRow {
    line: usize,
    cells: Vec<String>,
}

/// Reads a CSV with a header row, keeping the `required` columns in that order.
/// Longest accepted line of an input CSV, bytes.
const CSV_LINE_MAX: usize = 4096;

/// Most data rows a fit reads (the fits count points in 16 bits).
const CSV_ROWS_MAX: usize = 65_535;

pub(crate) fn read_csv(path: &Path, required: &[&str]) -> CliResult<Vec<CsvRow>> {
    use std::io::BufRead;
    let name = path.display();
    let file = std::fs::File::open(path)
        .map_err(|e| CliError::new(format!("--input {name}: cannot read it: {e}")))?;
    // Read line by line, each line and the row count bounded, so a huge file is refused
    // early instead of being loaded whole.
    let mut reader = std::io::BufReader::new(file);
    let mut next_line = |n: &mut usize| -> CliResult<Option<(usize, String)>> {
        loop {
            let mut buf = Vec::new();
            let got = std::io::Read::take(&mut reader, CSV_LINE_MAX as u64 + 1)
                .read_until(b'\n', &mut buf)
                .map_err(|e| CliError::new(format!("--input {name}: cannot read it: {e}")))?;
            if got == 0 {
                return Ok(None);
            }
            *n += 1;
            if buf.len() > CSV_LINE_MAX && !buf.ends_with(b"\n") {
                return Err(CliError::new(format!(
                    "--input {name} line {n}: longer than {CSV_LINE_MAX} bytes; is this the right file?"
                )));
            }
            let text = String::from_utf8(buf)
                .map_err(|_| CliError::new(format!("--input {name} line {n}: not UTF-8 text")))?;
            let t = text.trim();
            if !t.is_empty() && !t.starts_with('#') {
                return Ok(Some((*n, t.to_string())));
            }
        }
    };
    let mut n = 0usize;
    let want = required.join(",");
    let Some((hline, header)) = next_line(&mut n)? else {
        return Err(CliError::new(format!(
            "--input {name}: no header row; the first line must name the columns {want}"
        )));
    };
    let heads: Vec<String> = header
        .split(',')
        .map(|h| h.trim().trim_start_matches('\u{feff}').to_ascii_lowercase())
        .collect();
    let mut idx = Vec::new();
    for r in required {
        let found: Vec<usize> = heads
            .iter()
            .enumerate()
            .filter(|(_, h)| h == r)
            .map(|(i, _)| i)
            .collect();
        match found.as_slice() {
            [i] => idx.push(*i),
            [] => {
                return Err(CliError::new(format!(
                    "--input {name} line {hline}: the header lacks column \"{r}\"; the columns needed are {want}"
                )))
            }
            _ => {
                return Err(CliError::new(format!(
                    "--input {name} line {hline}: column \"{r}\" appears twice in the header"
                )))
            }
        }
    }
    let mut rows = Vec::new();
    while let Some((line, l)) = next_line(&mut n)? {
        if rows.len() == CSV_ROWS_MAX {
            return Err(CliError::new(format!(
                "--input {name} line {line}: more than {CSV_ROWS_MAX} data rows; a fit takes at most {CSV_ROWS_MAX} points"
            )));
        }
        let cells: Vec<&str> = l.split(',').map(str::trim).collect();
        if cells.len() != heads.len() {
            return Err(CliError::new(format!(
                "--input {name} line {line}: {} fields, but the header has {}",
                cells.len(),
                heads.len()
            )));
        }
        rows.push(CsvRow {
            line,
            cells: idx
                .iter()
                .map(|&i| cells.get(i).map_or_else(String::new, |c| (*c).to_string()))
                .collect(),
        });
    }
    Ok(rows)
}

pub(crate) fn csv_f32(path: &Path, row: &CsvRow, i: usize, column: &str) -> CliResult<f32> {
    let t = &row.cells[i];
    match t.parse::<f32>() {
        Ok(x) if x.is_finite() => Ok(x),
        _ => Err(CliError::new(format!(
            "--input {} line {}, column \"{column}\": not a finite number: {t:?}",
            path.display(),
            row.line
        ))),
    }
}

pub(super) fn csv_i32(path: &Path, row: &CsvRow, i: usize, column: &str) -> CliResult<i32> {
    let t = &row.cells[i];
    t.parse::<i32>().map_err(|_| {
        CliError::new(format!(
            "--input {} line {}, column \"{column}\": not a whole number: {t:?}",
            path.display(),
            row.line
        ))
    })
}

/// A peak fit's error; too few points says how many of the `(used, total)` the fit
/// could use and `why` the others were left out.
fn too_few(e: Error, ctx: &str, (used, total): (usize, usize), why: &str) -> CliError {
    match e {
        Error::TooFewPoints => CliError {
            code: Some(e.code()),
            message: format!(
                "{ctx}: too few usable points: {used} of {total} {why}; a peak needs at least 3 around its maximum: add measurements across the peak"
            ),
        },
        e => CliError::core(e, ctx),
    }
}

/// `mwctl calc fit`.
pub fn fit_cmd(a: &FitArgs) -> CliResult<Report> {
    let cols = a.kind.columns();
    let rows = read_csv(&a.input, cols)?;
    let p = a.input.as_path();
    let mut r = Report::default();
    r.field("kind", "fit", text(a.kind.name()));
    r.field("input", "input", text(p.display().to_string()));
    let ctx = format!("fit {} (--input {})", a.kind.name(), p.display());
    match a.kind {
        FitKind::Peak => {
            let mut samples = Vec::with_capacity(rows.len());
            for row in &rows {
                samples.push(matterwave_core::fit::Sample {
                    angle_deg: csv_f32(p, row, 0, cols[0])?,
                    current: csv_f32(p, row, 1, cols[1])?,
                });
            }
            let n = samples.len();
            let (c, threshold) = match a.method {
                PeakMethod::Parabola => {
                    let positive = samples.iter().filter(|s| s.current > 0.0).count();
                    (
                        matterwave_core::fit::parabola_log(&samples).map_err(|e| {
                            too_few(
                                e,
                                &ctx,
                                (positive, n),
                                "have a positive current (ln(current) needs one; zero and negative currents are dropped)",
                            )
                        })?,
                        None,
                    )
                }
                PeakMethod::Centroid => {
                    // The one background rule of the core, as the controller uses it.
                    let t = match a.threshold {
                        Some(t) => t,
                        None => matterwave_core::fit::centroid_background(&samples).ctx(&ctx)?,
                    };
                    let above = samples.iter().filter(|s| s.current > t).count();
                    let why = format!(
                        "have a current above the threshold {t} (the others weigh nothing); give a lower --threshold"
                    );
                    (
                        matterwave_core::fit::centroid(&samples, t)
                            .map_err(|e| too_few(e, &ctx, (above, n), &why))?,
                        Some(t),
                    )
                }
            };
            r.field(
                "method",
                "method",
                text(match a.method {
                    PeakMethod::Parabola => "parabola",
                    PeakMethod::Centroid => "centroid",
                }),
            );
            r.field(
                "threshold",
                "threshold (background level)",
                Value::opt(threshold, 4),
            );
            r.field(
                "background_subtracted",
                "background subtracted",
                Value::Bool(threshold.is_some()),
            );
            if threshold.is_none() {
                r.notes.push(
                    "The parabola fits ln(current) as measured: no background is subtracted. A background under the peak widens the fitted FWHM and lowers the curvature; subtract it first, or use --method centroid (which subtracts --threshold, default the smallest current).".into(),
                );
            }
            r.field("angle_deg", "peak angle (deg)", f(c.angle_deg, 4));
            r.field("angle_sigma_deg", "σ angle (deg)", f(c.uncertainty_deg, 4));
            r.field("fwhm_deg", "FWHM (deg)", f(c.fwhm_deg, 4));
            r.field("peak_current", "peak current", f(c.peak_current, 4));
            r.field(
                "points_used",
                "points used",
                Value::Int(c.points_used.into()),
            );
            r.field("points", "points", Value::Int(samples.len() as i64));
        }
        FitKind::ArmZero => fit_arm_zero(a, &rows, &ctx, &mut r)?,
        FitKind::RowSpacing => {
            let mut pts = Vec::with_capacity(rows.len());
            for row in &rows {
                pts.push((
                    csv_f32(p, row, 0, cols[0])?,
                    csv_i32(p, row, 1, cols[1])?,
                    csv_f32(p, row, 2, cols[2])?,
                ));
            }
            let fit = matterwave_core::fit::row_spacing(&pts).ctx(&ctx)?;
            r.field("row_spacing_a", "row spacing d (Å)", f(fit.value, 5));
            r.field("row_spacing_sigma_a", "σ d (Å)", f(fit.sigma, 5));
            r.field(
                "rms_residual_deg",
                "rms exit-angle residual (deg)",
                f(fit.rms_residual, 4),
            );
            r.field("points", "points", Value::Int(fit.points.into()));
            let mut list = List {
                key: "residuals",
                columns: vec![
                    col("energy_ev", "energy (eV)"),
                    col("order", "n"),
                    col("exit_deg", "exit (deg)"),
                    col("fitted_deg", "fitted (deg)"),
                    col("residual_deg", "residual (deg)"),
                ],
                rows: Vec::new(),
            };
            for &(e, n, exit) in &pts {
                let lambda = beam::wavelength_a(e).ctx(&ctx)?;
                let pred = math::deg(math::asin_clamped(n as f32 * lambda / fit.value));
                list.rows.push(vec![
                    f(e, 3),
                    Value::Int(n.into()),
                    f(exit, 4),
                    f(pred, 4),
                    f(exit - pred, 4),
                ]);
            }
            r.list = Some(list);
        }
        FitKind::Iv => {
            let mut pts = Vec::with_capacity(rows.len());
            for row in &rows {
                pts.push((csv_i32(p, row, 0, cols[0])?, csv_f32(p, row, 1, cols[1])?));
            }
            let fit = matterwave_core::fit::inner_potential_and_spacing(&pts).ctx(&ctx)?;
            // The fit's model: one V0 over the whole energy range (not V0(E)).
            r.field(
                "inner_potential_model",
                "inner-potential model",
                text(matterwave_core::inner::V0ModelKind::Constant.name()),
            );
            r.notes.push("V0 is fitted as one constant over the energy range of the points; an energy-dependent V0(E) is not fitted.".into());
            r.field(
                "inner_potential_ev",
                "inner potential V0 (eV)",
                f(fit.inner_potential_ev, 3),
            );
            r.field(
                "inner_potential_sigma_ev",
                "σ V0 (eV)",
                f(fit.inner_potential_sigma_ev, 3),
            );
            r.field(
                "layer_spacing_a",
                "spacing d the orders count, λ inside = 2d/n (Å)",
                f(fit.layer_spacing_a, 5),
            );

            r.field(
                "layer_spacing_sigma_a",
                "σ d (Å)",
                f(fit.layer_spacing_sigma_a, 5),
            );
            r.field(
                "rms_residual_ev",
                "rms energy residual (eV)",
                f(fit.rms_residual_ev, 3),
            );
            r.field("points", "points", Value::Int(fit.points.into()));
            let mut list = List {
                key: "residuals",
                columns: vec![
                    col("order", "n"),
                    col("energy_ev", "energy (eV)"),
                    col("fitted_ev", "fitted (eV)"),
                    col("residual_ev", "residual (eV)"),
                ],
                rows: Vec::new(),
            };
            for &(n, e) in &pts {
                let pred = beam::energy_from_wavenumber_ev(n as f32 / (2.0 * fit.layer_spacing_a))
                    - fit.inner_potential_ev;
                list.rows.push(vec![
                    Value::Int(n.into()),
                    f(e, 3),
                    f(pred, 3),
                    f(e - pred, 3),
                ]);
            }
            r.notes.push(
                "d is the spacing the orders n count: with orders numbered as `calc ivpeaks` numbers them (n = ⌈G⊥·period⌉) it is the period along the normal; with Bragg orders of evenly spaced atomic planes, the interlayer spacing (e.g. Ru(0001): period c, interlayer c/2).".into(),
            );
            r.list = Some(list);
        }
    }
    Ok(r)
}

pub(super) fn fit_arm_zero(
    a: &FitArgs,
    rows: &[CsvRow],
    ctx: &str,
    r: &mut Report,
) -> CliResult<()> {
    let p = a.input.as_path();
    let (Some(crystal), Some(face_t), Some(beam_t)) = (&a.crystal, &a.face, &a.beam) else {
        return Err(CliError::new(
            "fit arm-zero needs the beam's model: give --crystal ID --face HKL --beam H,K (and --tilt DEG)",
        ));
    };
    let c = &calc::crystal_at(crystal, &a.sample)?;
    let (_, face) = calc::face_of(c, face_t)?;
    let rod = calc::parse_rod(beam_t)?;
    let tilt = check_angle(a.tilt, "tilt", TILT_MAX_DEG)?;
    let sample = match a.sample_work_function {
        calc::EvOrFace::Ev(x) => x,
        calc::EvOrFace::Face => calc::table_value(
            calc::TableValue::WorkFunction,
            "--sample-work-function",
            c,
            &face,
        )?,
    };
    for (name, x) in [
        ("cathode-work-function", a.cathode_work_function),
        ("sample-work-function", sample),
    ] {
        beam::check_work_function(x).ctx(format_args!("--{name} {x}"))?;
    }
    let wf = a.cathode_work_function - sample;
    if face.rod_inv_a(rod) == [0.0, 0.0] {
        return Err(CliError::new(format!(
            "fit arm-zero --beam {}: the specular beam sits at twice the tilt at every energy, so it cannot fix the gun offset; measure a diffracted beam",
            rod_text(rod)
        )));
    }
    let cols = a.kind.columns();
    let mut pts = Vec::with_capacity(rows.len());
    for row in rows {
        pts.push((csv_f32(p, row, 0, cols[0])?, csv_f32(p, row, 1, cols[1])?));
    }
    let model_fit = matterwave_core::fit::arm_zero_in_plane(&face, rod, tilt, wf, &pts).map_err(|e| match e {
        Error::Evanescent => CliError {
            code: Some(e.code()),
            message: format!(
                "{ctx}: the beam {} is evanescent at some of the energies; check --crystal, --face, --beam and --tilt",
                rod_text(rod)
            ),
        },
        other => CliError::core(other, ctx),
    })?;
    let (fit, s) = (model_fit.fit, f32::from(model_fit.branch));
    let model = |e: f32| goniometer::in_plane_arm_deg(&face, rod, tilt, model_fit.branch, e + wf);
    let [zero, offset] = fit.params;
    crystal_face_fields(r, c, &face);
    r.field("beam", "beam", text(rod_text(rod)));
    r.field("tilt_deg", "tilt (deg)", f(tilt, 3));
    r.field("branch", "branch", Value::Int(s as i64));
    if wf != 0.0 {
        r.field("contact_potential_ev", "φcathode − φsample (eV)", f(wf, 3));
    }
    r.field("arm_zero_deg", "arm zero δ0 (deg)", f(zero, 4));
    r.field("arm_zero_sigma_deg", "σ δ0 (deg)", f(fit.sigma[0], 4));
    r.field("energy_offset_ev", "gun offset ΔE (eV)", f(offset, 3));
    r.field("energy_offset_sigma_ev", "σ ΔE (eV)", f(fit.sigma[1], 3));
    r.field(
        "rms_residual_deg",
        "rms arm residual (deg)",
        f(fit.rms_residual, 4),
    );
    r.field("points", "points", Value::Int(fit.points.into()));
    r.field(
        "iterations",
        "iterations",
        Value::Int(fit.iterations.into()),
    );
    let mut list = List {
        key: "residuals",
        columns: vec![
            col("nominal_ev", "nominal (eV)"),
            col("arm_deg", "arm (deg)"),
            col("fitted_deg", "fitted (deg)"),
            col("residual_deg", "residual (deg)"),
        ],
        rows: Vec::new(),
    };
    for &(e, arm) in &pts {
        let pred = model(e + offset).ctx(ctx)? + zero;
        list.rows
            .push(vec![f(e, 3), f(arm, 4), f(pred, 4), f(arm - pred, 4)]);
    }
    r.list = Some(list);
    Ok(())
}
