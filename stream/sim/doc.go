// Package sim is a simulator source: a three-phase drive cabinet whose
// supply carries the currents of six-pulse variable-frequency drives. It
// yields frames like every source (one sample of every configured channel,
// interleaved, raw values) and exposes the model's own state (Truth) so tests
// and the demo can compare what the pipeline measures with what was made.
//
// The default site is the invented North Weir pumping station, cabinet DC-2:
// 400 V / 230 V, 50 Hz, three 30 kW pump drives with six-pulse diode front
// ends and 3 % input reactors, Isc = 6.1 kA at the PCC, IL = 160 A. Any other
// invented site is a Config away.
//
// # Model, and where each shape comes from
//
// Time. Sample n is at t = n/SampleRate seconds after Config.Start. Model
// values (frequency, load, filter condition, amplitudes) are recomputed once
// per block of BlockLen samples, never per sample; the waveform itself is
// continuous in phase across blocks.
//
// Frequency. Nominal plus a slow wander: the sum of three sinusoids with
// periods of 4.7, 11.3 and 29.9 minutes, amplitudes 25, 15 and 10 mHz (peak
// at most ±0.05 Hz) and phases drawn from the seed. Invented shape (common
// practice, no source).
//
// Load. A smooth daily profile: fraction of IL by simulated hour of day in
// Start's location (low at night, high during the daytime pumping hours),
// knots once an hour joined by cosine interpolation, so it is continuous with
// a continuous slope. The hour runs on from Start's clock reading
// (daylight-saving changes after Start are ignored). Invented (no source).
// SetLoad overrides it.
//
// Currents. Each phase current is a fundamental of RMS I1 = load·IL lagging
// its phase voltage by acos(DPF), DPF = 0.99 − 0.02·load (slightly lagging,
// more at high load: from memory, not a test value), plus the characteristic
// orders h = 6k ± 1 up to 49. The base shape is the ideal six-pulse bridge's
// Ih/I1 = 1/h (REFERENCE 5, closed form), scaled by a factor
//
//	a_h = 5·r5 · (5/h)^β · max(load, 0.05)^(−γ),   Ih/I1 = s(a_h/h),  s(x) = x/√(1+x²)
//
// where r5 and β move linearly with the filter condition c between the
// healthy 3 % reactor (c = 1: r5 = 0.35, β = 1, giving I5/I1 ≈ 33 % and
// THD_I ≈ 39 % at full load) and no reactor effect at all (c = 0: r5 = 0.90,
// β = 0.5, giving I5/I1 ≈ 67 % and THD_I ≈ 93 %); γ = 0.35 raises the ratios
// at light load, and s keeps every order below the fundamental. These real-
// drive levels are from memory, not test values. Properties the tests rely on
// follow from the form: every ratio falls with load (so THD_I falls) while
// THD_I·I1 rises (so TDD = THD_I·I1/IL rises), and every ratio rises as c
// falls. Harmonic phases follow the six-pulse pattern: order h of phase p is
// at h·θ1(p), plus 180° for h = 6k − 1 (the sign of the square-block Fourier
// series), so the 5th is negative sequence and the 7th positive (REFERENCE 5,
// closed form).
//
// Single-phase loads. A 3rd harmonic of NeutralI3A/3 in every phase, in phase
// on all three (zero sequence), so the neutral carries NeutralI3A (default
// 2 A scaled with IL/160 A). Invented (no source). A neutral current channel
// (Phase 'n') is the exact sum of the three phase currents. A current
// channel with Share s carries s times the load current: a bus with an
// incomer (Share 1) and drives (shares summing to 1) keeps Kirchhoff's
// current law exactly.
//
// Voltages. Phase a is a cosine at angle 0 of RMS VoltageV; b and c follow at
// −120° and +120°. Each current harmonic drops across the source reactance
// implied by Isc: X = VoltageV/Isc at the fundamental, X_h = h·X, so
// V_h = −j·h·X·I_h (common practice, no source), and voltage distortion moves
// with current distortion. A background 5th of 0.5 % of nominal from the
// network is added in phase with the local 5th drop (a worst case: the
// network's other rectifiers; invented, no source), so voltage THD rises
// monotonically as the filter condition falls.
//
// Filter condition. Config.Filter describes how the input reactor/filter
// condition changes over simulated time: c(t) = 1 − (1 − Worst)·(1 −
// cos(2πt/Period))/2, healthy (1.0) at the start, Worst at Period/2, healthy
// again at Period (a slow ageing-and-repair cycle; invented). Period 0 keeps
// it at 1.0. SetFilterCondition overrides it.
//
// Dips. Each Dip multiplies the whole voltage of its phases by Depth for its
// Duration, with sample-accurate edges. Currents do not respond to dips.
//
// Noise. White Gaussian noise of standard deviation 0.05 % of nominal
// (VoltageV on voltage channels, IL on current channels), independent per
// channel, from a math/rand/v2 PCG generator seeded with Config.Seed.
//
// # Cost
//
// Each order is a unit phasor rotated by a complex multiply per sample
// (shared by all channels) and reset exactly from the accumulated phase at
// every block, so there is no drift and no math.Sin per sample; each sample of
// each channel is then a short dot product with that channel's per-block
// coefficients. ReadFrames allocates nothing.
//
// The package imports only the standard library and metrics (for Kind).
package sim
