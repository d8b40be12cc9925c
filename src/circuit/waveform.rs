//! The mains wave: a sine, or a sine with flattened tops when the crest factor is below sqrt 2.
//!
//! Rectifier loads on the same line draw current only near the peaks, so the line impedance
//! shaves the tops off; the wave keeps its RMS (what the meter reads) while its peak, which is
//! what a capacitor-input supply charges to, falls. A clipped sine is the simplest wave with a
//! given crest factor and the same RMS.

use std::f64::consts::{FRAC_PI_2, PI, SQRT_2};

/// A periodic wave normalised to 1 V RMS, evaluated by phase.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MainsWave {
    /// Where the sine is clipped, as a fraction of its own peak (1 = clean sine).
    clip: f64,
    /// Scale that brings the clipped wave back to 1 V RMS.
    gain: f64,
}

/// Mean square of `sin` clipped at `k` (0 < k <= 1), over a whole period.
fn clipped_mean_square(k: f64) -> f64 {
    let alpha = k.clamp(0.0, 1.0).asin();
    // A quarter period: sin^2 up to alpha, then the flat top k^2.
    (2.0 / PI) * (alpha / 2.0 - (2.0 * alpha).sin() / 4.0 + k * k * (FRAC_PI_2 - alpha))
}

impl MainsWave {
    /// A wave of 1 V RMS whose peak is `crest` volts (crest between 1 and sqrt 2; higher values
    /// are taken as a clean sine).
    pub fn with_crest(crest: f64) -> MainsWave {
        if crest >= SQRT_2 - 1e-9 {
            return MainsWave {
                clip: 1.0,
                gain: SQRT_2,
            };
        }
        let crest_of = |k: f64| k / clipped_mean_square(k).sqrt();
        // The crest factor rises monotonically with the clip level, from 1 (a square wave)
        // to sqrt 2 (no clipping): bisection is safe and needs no derivative.
        let (mut lo, mut hi) = (1e-6, 1.0);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if crest_of(mid) < crest {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let clip = 0.5 * (lo + hi);
        MainsWave {
            clip,
            gain: 1.0 / clipped_mean_square(clip).sqrt(),
        }
    }

    /// Instantaneous value in volts per RMS volt at `phase` radians.
    #[inline]
    pub fn at(&self, phase: f64) -> f64 {
        self.of_sine(phase.sin())
    }

    /// The same at a phase whose sine is `sine` (for phases found from another's sine and
    /// cosine rather than each by its own sine).
    #[inline]
    pub fn of_sine(&self, sine: f64) -> f64 {
        self.gain * sine.clamp(-self.clip, self.clip)
    }

    /// Peak value in volts per RMS volt.
    pub fn crest(&self) -> f64 {
        self.gain * self.clip
    }

    /// Phase where the flat top begins, radians, or None for a clean sine.
    pub fn clip_phase(&self) -> Option<f64> {
        (self.clip < 1.0).then(|| self.clip.asin())
    }

    /// Phase of the first peak, radians: the start of the flat top (switch-on there is the worst
    /// inrush).
    pub fn peak_phase(&self) -> f64 {
        self.clip.asin()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rms_and_peak(w: &MainsWave) -> (f64, f64) {
        let n = 100_000;
        let (mut sq, mut peak) = (0.0, 0.0f64);
        for i in 0..n {
            let v = w.at(2.0 * PI * (i as f64 + 0.5) / n as f64);
            sq += v * v;
            peak = peak.max(v.abs());
        }
        ((sq / n as f64).sqrt(), peak)
    }

    #[test]
    fn keeps_one_volt_rms_at_any_crest() {
        for crest in [1.2, 1.35, 1.38, 1.40, 1.414, SQRT_2] {
            let w = MainsWave::with_crest(crest);
            let (rms, peak) = rms_and_peak(&w);
            assert!((rms - 1.0).abs() < 1e-6, "crest {crest}: rms {rms}");
            assert!((peak - crest).abs() < 1e-6, "crest {crest}: peak {peak}");
        }
    }
}
