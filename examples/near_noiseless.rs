//! Calibration diagnosis on INVENTED near-noiseless data
//! (benches/support/near_noiseless.rs: a made-up smooth function of 12
//! inputs, noise sd 1e-4 of its range). Trains one committee and reports,
//! on fresh rows of the same generator, the coverages, rms of
//! z = (y − mean)/sd, and where the variance comes from (noise, members'
//! parameter variance, committee spread, residual process, the share ρ
//! of the model part kept beside the process), with the variance as
//! before ρ ("model part whole") beside today's, by quintile of the
//! predicted sd.
//!
//! ```text
//! cargo run --release --example near_noiseless -- --rows 3000 --hidden 1..8 --restarts 2
//! # --min-heldout N: held-out rows the model part's share needs (default
//! # prec::MODEL_PART_MIN_HELDOUT)
//! ```

use mettle::fixedmath::FixedMath;
#[path = "../benches/support/near_noiseless.rs"]
mod near_noiseless;

use mettle::committee::{CommitteeParams, KrigingMode, NoiseMode};
use mettle::data::Table;
use mettle::model::TrainSpec;
use mettle::observer::Silent;
use mettle::Model;
use ndarray::Array1;

fn arg(args: &[String], name: &str) -> Option<String> {
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

fn stats(label: &str, y: &[f64], m: &[f64], v: &[f64], h68: f64, h95: f64) {
    let n = y.len() as f64;
    if y.is_empty() {
        return;
    }
    let z: Vec<f64> = (0..y.len()).map(|i| (y[i] - m[i]) / v[i].sqrt()).collect();
    let rms = (z.iter().map(|z| z * z).sum::<f64>() / n).sqrt();
    let c68 = z.iter().filter(|z| z.abs() <= h68).count() as f64 / n;
    let c95 = z.iter().filter(|z| z.abs() <= h95).count() as f64 / n;
    let g68 = z.iter().filter(|z| z.abs() <= 1.0).count() as f64 / n;
    let mut a: Vec<f64> = z.iter().map(|z| z.abs()).collect();
    a.sort_by(f64::total_cmp);
    let nlpd = (0..y.len())
        .map(|i| 0.5 * (2.0 * std::f64::consts::PI * v[i]).ln_fixed() + 0.5 * z[i] * z[i])
        .sum::<f64>()
        / n;
    println!(
        "{label:<34} n {:5}  rms z {rms:6.3}  median|z| {:5.3}  cov68 {c68:5.3} (gauss ±1 {g68:5.3})  cov95 {c95:5.3}  gauss nlpd(scaled) {nlpd:8.3}",
        y.len(),
        a[a.len() / 2]
    );
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let rows: usize = arg(&args, "--rows").map_or(Ok(3000), |s| s.parse())?;
    let test_rows: usize = arg(&args, "--test-rows").map_or(Ok(2000), |s| s.parse())?;
    let seed: u64 = arg(&args, "--seed").map_or(Ok(7), |s| s.parse())?;
    let restarts: usize = arg(&args, "--restarts").map_or(Ok(2), |s| s.parse())?;
    let hidden = arg(&args, "--hidden").unwrap_or_else(|| "1..8".into());
    let (h0, h1) = hidden.split_once("..").expect("--hidden A..B");
    let kriging = match arg(&args, "--kriging").as_deref() {
        Some("off") => KrigingMode::Off,
        Some("on") => KrigingMode::On,
        _ => KrigingMode::Auto,
    };
    let noise = match arg(&args, "--noise").as_deref() {
        Some("constant") => NoiseMode::Constant,
        Some("varying") => NoiseMode::Varying,
        _ => NoiseMode::Auto,
    };
    let (train_cols, sd) = near_noiseless::columns(rows, seed);
    let (test_cols, _) = near_noiseless::columns(test_rows, seed + 1000);
    let train = Table::from_columns("near-noiseless (invented)", train_cols)?;
    let test = Table::from_columns("near-noiseless test (invented)", test_cols.clone())?;
    let mut spec = TrainSpec::new(&["y"]);
    spec.auto_log_inputs = false;
    spec.params = CommitteeParams::default()
        .hidden(h0.parse()?, h1.parse()?)
        .restarts(restarts)
        .seed(seed)
        .kriging(kriging)
        .noise(noise)
        .heavy_tails(!args.iter().any(|a| a == "--no-tails"))
        .model_part_min_heldout(
            arg(&args, "--min-heldout")
                .map_or(Ok(mettle::prec::MODEL_PART_MIN_HELDOUT), |s| s.parse())?,
        );
    let t0 = std::time::Instant::now();
    let model = Model::train(&train, &spec, &Silent)?;
    println!(
        "trained in {:.1} s; generator noise sd {sd:.3e}",
        t0.elapsed().as_secs_f64()
    );
    let t = &model.targets[0];
    let c = &t.committee;
    let w = t.scaling.width();
    println!(
        "members {:?}  betas^-1/2*w {:?}",
        c.members.iter().map(|m| m.n_hidden).collect::<Vec<_>>(),
        c.members
            .iter()
            .map(|m| format!("{:.2e}", m.noise_sd() * w))
            .collect::<Vec<_>>()
    );
    println!(
        "noise: varying {} (const {:?} vs varying {:?}); kriging used {} (committee {:?} vs kriged {:?}); nlpd_by_size {:?}",
        c.selection.noise.varying,
        c.selection.noise.constant_nlpd,
        c.selection.noise.varying_nlpd,
        c.selection.kriging.used,
        c.selection.kriging.committee_nlpd,
        c.selection.kriging.kriging_nlpd,
        c.selection.nlpd_by_size
    );
    if let Some(mp) = &c.selection.kriging.model_part {
        println!(
            "model part beside the process (held-out): whole nlpd {:.4}  times ρ {:.4}  se {:.4}  mean z² whole {:.3}  P(χ² ≤) {:.2e}  shared {}",
            mp.whole_nlpd, mp.shared_nlpd, mp.se, mp.whole_mean_z2, mp.whole_too_wide_p, mp.shared
        );
    }
    if let Some(g) = &c.gross_errors {
        println!(
            "gross share {:.4}  tail dof {:?}  heldout nlpd gaussian {:.4} -> {:.4}",
            g.share, g.tail_dof, g.heldout_nlpd_gaussian, g.heldout_nlpd
        );
    }
    // components on the fresh rows, scaled units
    let (_, x) = model.scaled_inputs(&test)?;
    let y: Vec<f64> = test_cols[near_noiseless::N_INPUTS]
        .1
        .iter()
        .map(|v| t.scaling.scale(*v).expect("scales"))
        .collect();
    let p = c.predict_scaled(x.view());
    let n = y.len();
    let k = c.members.len() as f64;
    let mut param = Array1::<f64>::zeros(n);
    let mut means = vec![];
    for mb in &c.members {
        let (ym, v, nv) = mb.predictive(c.n_inputs, x.view());
        param += &((&v - &nv) / k);
        means.push(ym);
    }
    let mut cm = Array1::<f64>::zeros(n);
    for ym in &means {
        cm += &(ym / k);
    }
    let mut spread = Array1::<f64>::zeros(n);
    for ym in &means {
        spread += &((ym - &cm).mapv(|d| d * d) / k);
    }
    let gp = c.kriging_correction(x.view());
    let mean_of = |a: &Array1<f64>| a.mean().unwrap_or(0.0);
    println!(
        "mean variances (scaled): total {:.3e}  noise {:.3e}  param {:.3e}  spread {:.3e}  gp {:.3e}",
        mean_of(&p.var),
        mean_of(&p.noise_var),
        mean_of(&param),
        mean_of(&spread),
        gp.as_ref().map_or(0.0, |g| mean_of(&g.1))
    );
    let err2: f64 = (0..n).map(|i| (y[i] - p.mean[i]).powi(2)).sum::<f64>() / n as f64;
    let cerr2: f64 = (0..n).map(|i| (y[i] - cm[i]).powi(2)).sum::<f64>() / n as f64;
    println!(
        "mse (scaled): committee+gp {err2:.3e}  committee alone {cerr2:.3e}  rmse target units {:.3e}",
        err2.sqrt() * w
    );
    let shape = c.shape();
    let (h68, h95) = (
        shape.central_halfwidth(0.682_689_5),
        shape.central_halfwidth(0.954_5),
    );
    println!("shape half-widths: 68 {h68:.3}  95 {h95:.3}");
    let m = p.mean.to_vec();
    let v = p.var.to_vec();
    stats("all (model's var, model's shape)", &y, &m, &v, h68, h95);
    let g = (1.0, 2.0);
    stats("all (model's var, gaussian)", &y, &m, &v, g.0, g.1);
    let cv: Vec<f64> = (0..n)
        .map(|i| p.noise_var[i] + param[i] + spread[i])
        .collect();
    stats(
        "committee alone (no gp), gaussian",
        &y,
        &cm.to_vec(),
        &cv,
        g.0,
        g.1,
    );
    // the model part discounted by what the process learnt near each row:
    // ρ = process variance / its prior variance τ²
    if let (Some((_, gv, s)), Some(k)) = (gp.as_ref(), c.kriging.as_ref()) {
        let tau2 = k.signal_var;
        let rho: Vec<f64> = gv.iter().map(|v| (v / tau2).clamp(0.0, 1.0)).collect();
        let model: Vec<f64> = (0..n).map(|i| param[i] + spread[i]).collect();
        let nv: Vec<f64> = (0..n).map(|i| p.noise_var[i]).collect();
        let dv: Vec<f64> = (0..n).map(|i| nv[i] + rho[i] * model[i] + gv[i]).collect();
        stats("model part × ρ, gaussian", &y, &m, &dv, g.0, g.1);
        let wv: Vec<f64> = (0..n).map(|i| nv[i] + model[i] + gv[i]).collect();
        stats("model part whole (before), gaussian", &y, &m, &wv, g.0, g.1);
        let ov: Vec<f64> = (0..n).map(|i| nv[i] + gv[i]).collect();
        stats("no model part, gaussian", &y, &m, &ov, g.0, g.1);
        println!(
            "tau2 {tau2:.3e}  s {s:.3}  mean rho {:.3}  median rho {:.3}",
            rho.iter().sum::<f64>() / n as f64,
            {
                let mut r = rho.clone();
                r.sort_by(f64::total_cmp);
                r[n / 2]
            }
        );
        // parts by quintile of the predicted sd
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
        println!("| sd quintile | noise s/β | param gᵀA⁻¹g | spread | process | ρ | total | error² | error²/total |");
        println!("|---|---|---|---|---|---|---|---|---|");
        for q in 0..5 {
            let idx = &order[q * n / 5..(q + 1) * n / 5];
            let mean = |f: &dyn Fn(usize) -> f64| {
                idx.iter().map(|&i| f(i)).sum::<f64>() / idx.len() as f64
            };
            let tot = mean(&|i| v[i]);
            let e2 = mean(&|i| (y[i] - m[i]).powi(2));
            println!(
                "| {} | {:.2e} | {:.2e} | {:.2e} | {:.2e} | {:.2} | {:.2e} | {:.2e} | {:.2} |",
                q + 1,
                mean(&|i| nv[i]),
                mean(&|i| param[i]),
                mean(&|i| spread[i]),
                mean(&|i| gv[i]),
                mean(&|i| rho[i]),
                tot,
                e2,
                e2 / tot
            );
        }
    }
    // split by share of the model part
    for (lab, lo, hi) in [
        ("noise share > 0.5", 0.5, 1.01),
        ("noise share 0.1..0.5", 0.1, 0.5),
        ("noise share < 0.1", -1.0, 0.1),
    ] {
        let idx: Vec<usize> = (0..n)
            .filter(|&i| {
                let s = p.noise_var[i] / p.var[i];
                s > lo && s <= hi
            })
            .collect();
        let pick = |a: &[f64]| idx.iter().map(|&i| a[i]).collect::<Vec<f64>>();
        stats(lab, &pick(&y), &pick(&m), &pick(&v), g.0, g.1);
    }
    // quartiles of the predicted sd
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    for q in 0..4 {
        let idx = &order[q * n / 4..(q + 1) * n / 4];
        let pick = |a: &[f64]| idx.iter().map(|&i| a[i]).collect::<Vec<f64>>();
        stats(
            &format!("sd quartile {}", q + 1),
            &pick(&y),
            &pick(&m),
            &pick(&v),
            g.0,
            g.1,
        );
    }
    // the evaluation the CLI reports
    for (name, e) in model.evaluate(&test)? {
        if let Some(e) = e {
            println!(
                "evaluate {name}: rmse {:.3e} nlpd {:.4} coverage_68 {:.3} coverage_95 {:.3}",
                e.rmse, e.nlpd, e.coverage_68, e.coverage_95
            );
        }
    }
    Ok(())
}
