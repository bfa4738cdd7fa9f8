//! The demo scenario: an invented training fund that screens applications for paid placements.
//! Generated from a stated model with a seed (docs/demo.md), so the true effect of every option
//! is known and can be checked.

use std::path::Path;

use rand::Rng;

use crate::engine::streams::{stream_rng, Stream};
use crate::error::{Error, Result};

/// Seed of the committed demo.
pub const DEMO_SEED: u64 = 4_711;
/// Applications in the demo data.
pub const DEMO_ROWS: usize = 3_000;
/// Share of applicants who declared a disability.
pub const DISABLED_SHARE: f64 = 0.18;
/// Pilot size of the work-sample feature.
pub const PILOT_WORK_SAMPLE: usize = 600;
/// Pilot size of the reference-rating feature.
pub const PILOT_REFERENCE: usize = 400;
/// Pilot size of the postcode-digit feature.
pub const PILOT_POSTCODE: usize = 1_200;

const REGIONS: [&str; 4] = ["North", "East", "South", "West"];

/// One invented applicant, with the hidden qualities the label depends on.
#[derive(Debug, Clone, PartialEq)]
pub struct Applicant {
    /// Hidden: general aptitude, N(0, 1).
    pub aptitude: f64,
    /// Hidden: practical skill, N(0, 1), independent of aptitude.
    pub skill: f64,
    /// Declared a disability.
    pub disabled: bool,
    /// Score on the written test, 0 to 100.
    pub test_score: f64,
    /// Years of relevant experience.
    pub years_experience: f64,
    /// Region of residence.
    pub region: &'static str,
    /// Took a preparatory course.
    pub prior_course: bool,
    /// Score on the timed practical task (a candidate feature).
    pub work_sample: f64,
    /// Rating from a past supervisor (a candidate feature).
    pub reference_rating: f64,
    /// Last digit of the postcode (a candidate feature).
    pub postcode_digit: u32,
    /// The label: shortlisted or not.
    pub shortlisted: bool,
}

fn normal(rng: &mut impl Rng) -> f64 {
    // Box-Muller; 1 - u keeps the logarithm finite.
    let u: f64 = 1.0 - rng.gen::<f64>();
    let v: f64 = rng.gen::<f64>();
    (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
}

fn round_to(x: f64, step: f64) -> f64 {
    (x / step).round() * step
}

/// Draws one applicant from the scenario's generating model (docs/demo.md states it).
pub fn draw_applicant(rng: &mut impl Rng, disabled_share: f64) -> Applicant {
    let aptitude = normal(rng);
    let skill = normal(rng);
    let disabled = rng.gen::<f64>() < disabled_share;
    let d = if disabled { 1.0 } else { 0.0 };
    let test_score = round_to(
        (60.0 + 8.0 * aptitude + 8.0 * normal(rng)).clamp(0.0, 100.0),
        1.0,
    );
    let years_experience = round_to(
        (4.0 + 1.0 * aptitude + 1.2 * skill - 1.5 * d + 2.0 * normal(rng)).max(0.0),
        0.1,
    );
    let region = REGIONS[rng.gen_range(0..REGIONS.len())];
    let prior_course = rng.gen::<f64>() < 1.0 / (1.0 + (-0.5 * aptitude).exp());
    let work_sample = round_to(50.0 + 10.0 * skill + 4.0 * normal(rng), 0.1);
    let reference_rating = (3.0 + 0.3 * skill + 0.3 * aptitude + normal(rng))
        .round()
        .clamp(1.0, 5.0);
    let postcode_digit = rng.gen_range(0..10);
    let merit = 0.9 * aptitude + 0.9 * skill + 0.25 * f64::from(u8::from(prior_course)) - 0.35 * d
        + 0.6 * normal(rng);
    Applicant {
        aptitude,
        skill,
        disabled,
        test_score,
        years_experience,
        region,
        prior_course,
        work_sample,
        reference_rating,
        postcode_digit,
        shortlisted: merit > 0.4,
    }
}

/// Draws `rows` applicants from random stream `stream` of `seed`.
pub fn draw_applicants(
    rows: usize,
    seed: u64,
    stream: Stream,
    disabled_share: f64,
) -> Vec<Applicant> {
    let mut rng = stream_rng(seed, stream, 0);
    (0..rows)
        .map(|_| draw_applicant(&mut rng, disabled_share))
        .collect()
}

/// Which rows carry each candidate feature (the pilots): random draws of the pilot sizes, scaled
/// with the rows when the demo is drawn larger.
fn pilot_masks(rows: usize, seed: u64) -> [Vec<bool>; 3] {
    use rand::seq::index::sample;
    let mut rng = stream_rng(seed, Stream::DemoPilots, 0);
    let mut mask = |size: usize| {
        let mut m = vec![false; rows];
        for i in sample(&mut rng, rows, size.min(rows)).into_iter() {
            m[i] = true;
        }
        m
    };
    let scaled = |size: usize| (size as u128 * rows as u128 / DEMO_ROWS as u128) as usize;
    [
        mask(scaled(PILOT_WORK_SAMPLE)),
        mask(scaled(PILOT_REFERENCE)),
        mask(scaled(PILOT_POSTCODE)),
    ]
}

/// The data file: current features for every row, candidate features only on pilot rows.
pub fn applications_csv(applicants: &[Applicant], seed: u64) -> String {
    let mut out = Vec::new();
    // Writing to memory cannot fail.
    let _ = write_applications(
        &mut out,
        applicants.iter().cloned(),
        applicants.len(),
        seed,
        0,
    );
    String::from_utf8(out).unwrap_or_default()
}

/// Writes the data file row by row: `rows` applicants, with `extra` invented survey columns
/// (answers 1 to 5, or a letter for every fifth, some weakly tied to the hidden qualities).
pub fn write_applications(
    out: &mut impl std::io::Write,
    applicants: impl Iterator<Item = Applicant>,
    rows: usize,
    seed: u64,
    extra: usize,
) -> std::io::Result<()> {
    let [work, reference, postcode] = pilot_masks(rows, seed);
    let mut header = String::from(
        "applicant_id,disability,test_score,years_experience,region,prior_course,work_sample,reference_rating,postcode_digit",
    );
    for k in 0..extra {
        header.push_str(&format!(",survey_q{:02}", k + 1));
    }
    header.push_str(",shortlisted\n");
    out.write_all(header.as_bytes())?;
    let yes_no = |b: bool| if b { "yes" } else { "no" };
    let mut survey = stream_rng(seed, Stream::DemoExtraColumns, 0);
    let mut line = String::new();
    for (i, a) in applicants.enumerate().take(rows) {
        let pilot = |on: bool, text: String| if on { text } else { String::new() };
        line.clear();
        line.push_str(&format!(
            "LPF-{:05},{},{:.0},{:.1},{},{},{},{},{}",
            i + 1,
            if a.disabled { "declared" } else { "none" },
            a.test_score,
            a.years_experience,
            a.region,
            yes_no(a.prior_course),
            pilot(work[i], format!("{:.1}", a.work_sample)),
            pilot(reference[i], format!("{:.0}", a.reference_rating)),
            pilot(postcode[i], a.postcode_digit.to_string()),
        ));
        for k in 0..extra {
            let tie = match k % 3 {
                0 => 0.3 * a.aptitude,
                1 => 0.3 * a.skill,
                _ => 0.0,
            };
            let answer = (3.0 + tie + normal(&mut survey)).round().clamp(1.0, 5.0);
            if k % 5 == 4 {
                line.push(',');
                line.push(char::from(b'a' + answer as u8 - 1));
            } else {
                line.push_str(&format!(",{answer:.0}"));
            }
        }
        line.push(',');
        line.push_str(yes_no(a.shortlisted));
        line.push('\n');
        out.write_all(line.as_bytes())?;
    }
    Ok(())
}

/// A data file with every column filled on every row (no pilots): what the fund would hold
/// after buying every feature, used to measure the options' true effects.
pub fn complete_csv(applicants: &[Applicant]) -> String {
    let mut out = String::from(
        "disability,test_score,years_experience,region,prior_course,work_sample,reference_rating,postcode_digit,shortlisted\n",
    );
    let yes_no = |b: bool| if b { "yes" } else { "no" };
    for a in applicants {
        out.push_str(&format!(
            "{},{:.0},{:.1},{},{},{:.1},{:.0},{},{}\n",
            if a.disabled { "declared" } else { "none" },
            a.test_score,
            a.years_experience,
            a.region,
            yes_no(a.prior_course),
            a.work_sample,
            a.reference_rating,
            a.postcode_digit,
            yes_no(a.shortlisted),
        ));
    }
    out
}

/// The cost sheet of the scenario, in euros.
pub const COSTS_CSV: &str = "\
name,kind,column,per_row,fixed,max_rows,step,sensitive,note
work-sample,feature,work_sample,4.50,2000,,,no,Timed practical task scored by two assessors
references,feature,reference_rating,2.00,500,,,no,Phone reference from a past supervisor
postcode,feature,postcode_digit,0.05,100,,,yes,Last digit of the postcode from the address file
more-applications,rows,,12.00,0,3000,500,no,Digitise the paper applications of the 2024 round
more-disabled-applicants,rows,disability=declared,30.00,1500,600,100,yes,Targeted outreach through disability networks
";

/// The project file, so that commands run in the demo folder need no flags.
pub const PROJECT_TOML: &str = "\
# Larkfield Placement Fund (an invented scenario): screening of applications for paid placements.
data = \"applications.csv\"
target = \"shortlisted\"
favourable = \"yes\"
protected = \"disability\"
exclude = [\"applicant_id\"]
costs = \"costs.csv\"
currency = \"EUR\"
budget = 20000
seed = 20261202
";

/// The cost sheet for a demo of `rows` applications: the scenario's, with the rows on offer and
/// their steps scaled with the data.
pub fn costs_csv(rows: usize) -> String {
    if rows == DEMO_ROWS {
        return COSTS_CSV.to_string();
    }
    let scaled = |n: usize| ((n as u128 * rows as u128 / DEMO_ROWS as u128) as usize).max(1);
    COSTS_CSV
        .replace(",3000,500,", &format!(",{},{},", scaled(3000), scaled(500)))
        .replace(",600,100,", &format!(",{},{},", scaled(600), scaled(100)))
}

/// How large a demo to draw: the committed scenario is `DemoSize::default()`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DemoSize {
    /// Applications to draw.
    pub rows: usize,
    /// Invented survey columns beyond the scenario's ten.
    pub extra_columns: usize,
}

impl Default for DemoSize {
    fn default() -> Self {
        DemoSize {
            rows: DEMO_ROWS,
            extra_columns: 0,
        }
    }
}

/// Writes the demo scenario into `folder`: applications.csv, costs.csv and acquest.toml. The
/// applicants are drawn and written one at a time, so a large demo never sits in memory.
pub fn write_demo(folder: &Path, size: DemoSize) -> Result<()> {
    let io = |e: std::io::Error| Error::File {
        path: folder.to_path_buf(),
        reason: e.to_string(),
    };
    std::fs::create_dir_all(folder).map_err(io)?;
    let mut rng = stream_rng(DEMO_SEED, Stream::DemoApplicants, 0);
    let applicants = std::iter::repeat_with(|| draw_applicant(&mut rng, DISABLED_SHARE));
    crate::files::write_whole(&folder.join("applications.csv"), |out| {
        write_applications(out, applicants, size.rows, DEMO_SEED, size.extra_columns)
    })
    .map_err(io)?;
    crate::files::write_text(&folder.join("costs.csv"), &costs_csv(size.rows)).map_err(io)?;
    let project = if size.rows == DEMO_ROWS {
        PROJECT_TOML.to_string()
    } else {
        // The budget grows with the data, so that a large demo still buys something.
        let budget = (20_000u128 * size.rows as u128 / DEMO_ROWS as u128) as u64;
        PROJECT_TOML.replace("budget = 20000", &format!("budget = {budget}"))
    };
    crate::files::write_text(&folder.join(crate::settings::PROJECT_FILE), &project).map_err(io)?;
    Ok(())
}

/// Writes applications.csv of `folder` again as applications.parquet, with typed columns.
pub fn write_parquet_copy(folder: &Path) -> Result<()> {
    use polars::prelude::{CsvReadOptions, ParquetWriter, SerReader};
    let csv = folder.join("applications.csv");
    let parquet = folder.join("applications.parquet");
    let failed = |path: &Path, reason: String| Error::File {
        path: path.to_path_buf(),
        reason,
    };
    let mut frame = CsvReadOptions::default()
        .with_has_header(true)
        .try_into_reader_with_file_path(Some(csv.clone()))
        .and_then(|r| r.finish())
        .map_err(|e| failed(&csv, e.to_string()))?;
    crate::files::write_whole(&parquet, |out| {
        ParquetWriter::new(out)
            .finish(&mut frame)
            .map(|_| ())
            .map_err(std::io::Error::other)
    })
    .map_err(|e| failed(&parquet, e.to_string()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn generator_repeats_and_follows_its_model() {
        let a = draw_applicants(20_000, 1, Stream::DemoApplicants, DISABLED_SHARE);
        assert_eq!(
            a[..50],
            draw_applicants(50, 1, Stream::DemoApplicants, DISABLED_SHARE)[..]
        );
        let share = a.iter().filter(|x| x.disabled).count() as f64 / a.len() as f64;
        assert!((share - DISABLED_SHARE).abs() < 0.015, "{share}");
        let mean_aptitude = a.iter().map(|x| x.aptitude).sum::<f64>() / a.len() as f64;
        assert!(mean_aptitude.abs() < 0.03);
        // The label carries a penalty for the under-represented group, so its rate is lower.
        let rate = |d: bool| {
            let g: Vec<&Applicant> = a.iter().filter(|x| x.disabled == d).collect();
            g.iter().filter(|x| x.shortlisted).count() as f64 / g.len() as f64
        };
        assert!(rate(true) < rate(false) - 0.05);
    }
}
