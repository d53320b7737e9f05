//! IEEE Std 1459-2010 single-phase powers from RMS values and fundamental phasors.

use serde::Serialize;

/// The single-phase power quantities of IEEE Std 1459-2010 (load convention).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Powers {
    /// P: active power, mean of v·i over whole cycles, W.
    pub active_w: f64,
    /// P1: fundamental active power V1·I1·cos θ1, W.
    pub fundamental_active_w: f64,
    /// PH = P − P1: harmonic active power, W.
    pub harmonic_active_w: f64,
    /// Q1: fundamental reactive power V1·I1·sin θ1, var, positive when inductive (current lags).
    pub reactive_var: f64,
    /// S = V·I: apparent power, VA.
    pub apparent_va: f64,
    /// S1 = V1·I1: fundamental apparent power, VA.
    pub fundamental_apparent_va: f64,
    /// SN = √(S² − S1²): non-fundamental apparent power, VA.
    pub nonfundamental_apparent_va: f64,
    /// DI = V1·IH: current distortion power, var.
    pub current_distortion_var: f64,
    /// DV = VH·I1: voltage distortion power, var.
    pub voltage_distortion_var: f64,
    /// SH = VH·IH: harmonic apparent power, VA.
    pub harmonic_apparent_va: f64,
    /// DH = √(SH² − PH²): harmonic distortion power, var.
    pub harmonic_distortion_var: f64,
    /// N = √(S² − P²): non-active power, var.
    pub nonactive_var: f64,
}

/// RMS and fundamental values of one trace, as the power definitions need them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RmsParts {
    /// True RMS (DC and everything included).
    pub total: f64,
    /// Fundamental RMS.
    pub fundamental: f64,
}

impl RmsParts {
    /// Non-fundamental RMS: √(X² − X1²) (IEEE 1459: includes DC, harmonics and noise).
    pub fn nonfundamental(&self) -> f64 {
        (self.total * self.total - self.fundamental * self.fundamental)
            .max(0.0)
            .sqrt()
    }
}

fn root_diff(a: f64, b: f64) -> f64 {
    (a * a - b * b).max(0.0).sqrt()
}

impl Powers {
    /// Builds every quantity from P, the RMS parts and the fundamental angle θ1 (radians,
    /// voltage angle minus current angle).
    pub fn new(active_w: f64, v: RmsParts, i: RmsParts, theta1_rad: f64) -> Self {
        let s = v.total * i.total;
        let s1 = v.fundamental * i.fundamental;
        let p1 = s1 * theta1_rad.cos();
        let q1 = s1 * theta1_rad.sin();
        let ph = active_w - p1;
        let (vh, ih) = (v.nonfundamental(), i.nonfundamental());
        let sh = vh * ih;
        Powers {
            active_w,
            fundamental_active_w: p1,
            harmonic_active_w: ph,
            reactive_var: q1,
            apparent_va: s,
            fundamental_apparent_va: s1,
            nonfundamental_apparent_va: root_diff(s, s1),
            current_distortion_var: v.fundamental * ih,
            voltage_distortion_var: vh * i.fundamental,
            harmonic_apparent_va: sh,
            harmonic_distortion_var: root_diff(sh, ph),
            nonactive_var: root_diff(s, active_w),
        }
    }

    /// True power factor P/S; `None` when S is zero.
    pub fn power_factor(&self) -> Option<f64> {
        (self.apparent_va > 0.0).then(|| self.active_w / self.apparent_va)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Worked example of shared/references.md §1, computed from the IEEE Std 1459-2010
    /// definitions: V1 = 230, VH = √(11.5² + 6.9²), I1 = 10, IH = √(2² + 1.4²), θ1 = 30°,
    /// P = P1 + PH with PH = 11.5·2·cos(120°) + 6.9·1.4·cos(20°).
    #[test]
    fn ieee_1459_worked_example() {
        let vh = (11.5f64.powi(2) + 6.9f64.powi(2)).sqrt();
        let ih = (2.0f64.powi(2) + 1.4f64.powi(2)).sqrt();
        let v = RmsParts {
            total: (230.0f64.powi(2) + vh * vh).sqrt(),
            fundamental: 230.0,
        };
        let i = RmsParts {
            total: (100.0 + ih * ih).sqrt(),
            fundamental: 10.0,
        };
        let ph = 11.5 * 2.0 * 120f64.to_radians().cos() + 6.9 * 1.4 * 20f64.to_radians().cos();
        let p1 = 2300.0 * 30f64.to_radians().cos();
        let pw = Powers::new(p1 + ph, v, i, 30f64.to_radians());
        // Values as listed in references §1 (4-7 significant figures).
        assert_relative_eq!(v.total, 230.3907, max_relative = 1e-6);
        assert_relative_eq!(i.total, 10.29369, max_relative = 1e-6);
        assert_relative_eq!(pw.fundamental_active_w, 1991.858, max_relative = 1e-6);
        assert_relative_eq!(pw.harmonic_active_w, -2.4226, max_relative = 1e-4);
        assert_relative_eq!(pw.active_w, 1989.436, max_relative = 1e-6);
        assert_relative_eq!(pw.reactive_var, 1150.000, max_relative = 1e-6);
        assert_relative_eq!(pw.apparent_va, 2371.570, max_relative = 1e-6);
        assert_relative_eq!(pw.nonfundamental_apparent_va, 578.223, max_relative = 1e-5);
        assert_relative_eq!(pw.current_distortion_var, 561.502, max_relative = 1e-5);
        assert_relative_eq!(pw.voltage_distortion_var, 134.112, max_relative = 1e-5);
        assert_relative_eq!(pw.harmonic_apparent_va, 32.7409, max_relative = 1e-5);
        assert_relative_eq!(pw.harmonic_distortion_var, 32.6511, max_relative = 1e-5);
        assert_relative_eq!(pw.nonactive_var, 1290.925, max_relative = 1e-6);
        assert_relative_eq!(pw.power_factor().unwrap(), 0.83887, max_relative = 1e-5);
        // S² = S1² + SN² and SN² = DI² + DV² + SH² (IEEE 1459-2010 definitions).
        assert_relative_eq!(
            pw.nonfundamental_apparent_va.powi(2),
            pw.current_distortion_var.powi(2)
                + pw.voltage_distortion_var.powi(2)
                + pw.harmonic_apparent_va.powi(2),
            max_relative = 1e-9
        );
    }
}
