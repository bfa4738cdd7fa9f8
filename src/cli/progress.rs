//! Progress bars on standard error and the per-stage clock of `--timings`.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use acquest::engine::trial::Progress;

/// Wall time per stage, for `--timings`.
#[derive(Default)]
pub(super) struct StageClock {
    /// Stages in the order they started, with their total time.
    stages: std::sync::Mutex<Vec<(&'static str, std::time::Duration)>>,
    current: std::sync::Mutex<Option<(&'static str, std::time::Instant)>>,
}

impl StageClock {
    pub(super) fn enter(&self, stage: &'static str) {
        let Ok(mut current) = self.current.lock() else {
            return;
        };
        if current.is_some_and(|(s, _)| s == stage) {
            return;
        }
        if let Some((previous, since)) = current.take() {
            self.add(previous, since.elapsed());
        }
        *current = Some((stage, std::time::Instant::now()));
    }

    pub(super) fn add(&self, stage: &'static str, time: std::time::Duration) {
        if let Ok(mut stages) = self.stages.lock() {
            match stages.iter_mut().find(|(s, _)| *s == stage) {
                Some((_, total)) => *total += time,
                None => stages.push((stage, time)),
            }
        }
    }

    /// The report printed by `--timings`.
    pub(super) fn report(&self, started: std::time::Instant) -> String {
        if let Ok(mut current) = self.current.lock() {
            if let Some((stage, since)) = current.take() {
                self.add(stage, since.elapsed());
            }
        }
        let mut out = format!(
            "timings: {:.1} s in all, {} models fitted ({:.1} a second)\n",
            started.elapsed().as_secs_f64(),
            acquest::engine::model::fits_so_far(),
            acquest::engine::model::fits_so_far() as f64
                / started.elapsed().as_secs_f64().max(1e-9)
        );
        if let Ok(stages) = self.stages.lock() {
            for (stage, time) in stages.iter() {
                out.push_str(&format!("  {stage:>20}: {:.1} s\n", time.as_secs_f64()));
            }
        }
        out
    }
}

pub(super) static CLOCK: std::sync::LazyLock<StageClock> =
    std::sync::LazyLock::new(StageClock::default);

pub(super) static STARTED: std::sync::LazyLock<std::time::Instant> =
    std::sync::LazyLock::new(std::time::Instant::now);

/// A progress bar on stderr, hidden when stderr is not a terminal or with --quiet.
pub(super) fn progress_bar(quiet: bool) -> ProgressBar {
    let bar = ProgressBar::with_draw_target(
        None,
        if quiet {
            ProgressDrawTarget::hidden()
        } else {
            ProgressDrawTarget::stderr()
        },
    );
    bar.set_style(
        ProgressStyle::with_template(
            "{msg:>20} [{bar:30}] {pos}/{len} ({eta} left in this stage; {elapsed} in all)",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> "),
    );
    bar
}

/// A progress sink that moves `bar`.
pub(super) fn shown_on(bar: &ProgressBar) -> impl Fn(Progress) + Sync + '_ {
    move |p: Progress| {
        CLOCK.enter(p.stage);
        bar.set_message(p.stage);
        bar.set_length(p.total as u64);
        // A stage's count never shows past its total, whatever order the workers report in.
        bar.set_position(p.done.min(p.total) as u64);
    }
}
