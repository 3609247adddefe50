"""Every threshold a finding or a caution is judged by, in one place, with its source.

A threshold is a design allowance, not physics: each says where it comes from. "Common
practice, no source" marks a figure of the trade that no single publication fixes; "ours"
marks an allowance this project chose.
"""

from __future__ import annotations

# --- levels ------------------------------------------------------------------------------
#: Headroom at max level under 6 dB is thin (the contract: "headroom under 6 dB at max
#: level"; also the trade's usual allowance for programme peaks, common practice, no source).
THIN_HEADROOM_DB = 6.0
#: Two nodes whose worst-case margins differ by less than this carry the same margin: one
#: finding names the first of them (ours: a twentieth of a dB is below any audible change).
SAME_MARGIN_DB = 0.05

#: A bridging input is at least ten times the impedance of what drives it, which costs under
#: 0.83 dB (common practice, no source); a chain whose first stage loads its source harder
#: than that loses level before any stage's gain counts it.
BRIDGING_RATIO = 10.0
#: A stage with more voltage gain than this at the reference is a gain stage (a factor of
#: 2; a flat tone stage, a follower or a volume pot stays well below it). Ours.
GAIN_STAGE_MIN_DB = 6.0

# --- heat --------------------------------------------------------------------------------
#: A junction within 25 K of its maximum runs close (common practice, no source).
JUNCTION_MARGIN_K = 25.0
#: What a small-signal or driver transistor takes in free air without a heatsink (common
#: practice, no source).
FOLLOWER_HOT_W = 0.5
#: A part dissipating about a watt, or whose junction passes about 60 degC, is too hot to
#: touch on its tab or heatsink (common practice, no source).
HOT_PART_W = 1.0
HOT_PART_DEGC = 60.0

# --- drive -------------------------------------------------------------------------------
#: Drive current within this factor of the limit leaves a thin margin: 6 dB, the same
#: allowance the contract asks of voltage headroom at max level (common practice, no source).
DRIVE_MARGIN = 0.5

# --- sound -------------------------------------------------------------------------------
#: Sustained exposure above about 85 dB(A) risks hearing damage; occupational-noise rules
#: commonly take action at 80-85 dB(A) over a working day (common practice, no source).
LOUD_SPL_DB = 85.0

# --- supplies ----------------------------------------------------------------------------
#: A capacitor-input rectifier draws its charge in short peaks, so the transformer's rms
#: current is well above the dc load: about 1.8x for a bridge (common practice, no source;
#: from memory). The rectifier model solves the real figure; this rule of thumb judges the
#: rating only when the winding resistance is not known (an ideal source's pulses are too
#: tall to judge it by).
RMS_PER_DC_AMP = 1.8
#: Ripple over this fraction of the peak costs every stage on the rail that much swing and
#: any regulator after it the margin: worth a larger reservoir (ours).
LARGE_RIPPLE_FRACTION = 0.2
#: A dropout margin under this is in regulation on paper only: the part's dropout, the
#: mains and the diodes all spread (ours, a design allowance).
THIN_DROPOUT_MARGIN_V = 0.5
#: A suggested bleeder brings a regulator's idle load this fraction above its minimum load,
#: not just to it: the op-amps' and the divider's currents spread with their parts (ours).
BLEEDER_MARGIN = 0.1
#: A battery's internal resistance that costs more clip power than this is worth a warning,
#: dB (the issue's figure; about the least change in loudness a listener notices on music,
#: common practice, no source).
BATTERY_SAG_COST_DB = 1.0
#: Off-load rise of small mains transformers (common practice, no source).
TYPICAL_REGULATION = (0.10, 0.25)

# --- noise ---------------------------------------------------------------------------------
#: Hiss at the loudspeaker above this, A-weighted at 1 m, is audible in the pauses of a quiet
#: room: a quiet living room's background is about 25-30 dB(A), and broadband hiss within
#: some 5-10 dB of it is heard at a listening distance of a metre or two (common practice,
#: no source).
HISS_SPL_A_LIMIT_DB = 20.0
#: Nominal programme at least this far above the unweighted noise at the output: below it
#: the hiss is plain in quiet passages (common practice, no source; hi-fi aims at 80 dB or
#: more re its rated output).
SNR_MIN_DB = 60.0
#: An attenuating stage ahead of the main gain is worth a note when moving it after the gain
#: would improve the output SNR by more than this: 3 dB, a doubling of the noise power
#: relative to the signal (common practice, no source).
PLACEMENT_LIFT_DB = 3.0

# --- DC ------------------------------------------------------------------------------------
#: An output sitting more than this fraction of its swing room away from its bias point has
#: lost a noticeable slice of headroom on that side (10 % of the room costs 0.9 dB); a
#: designer re-biases past that (common practice, no source).
DC_OFFSET_FRACTION = 0.10
#: DC across a pot track above this makes it crackle as the wiper moves and the wiper passes
#: DC steps on (common practice, no source).
POT_DC_LIMIT_V = 0.1
#: DC across a loudspeaker: past about 50 mV a designer trims it, past a volt it heats the
#: voice coil and pushes the cone off centre (common practice, no source). A load of under
#: 100 ohm is taken to be a loudspeaker; above it a line input, which should be AC-coupled.
SPEAKER_MAX_OHM = 100.0
SPEAKER_DC_WARN_V = 0.05
SPEAKER_DC_ERROR_V = 1.0
LINE_DC_NOTE_V = 0.1

# --- feedback loops ----------------------------------------------------------------------
#: A loop with less phase margin than this rings on transients and peaks near its unity-gain
#: frequency; 45 deg is the usual design minimum (Franco, Design with Operational Amplifiers
#: and Analog Integrated Circuits, 4th ed., sec. 8.1, from memory; common practice).
PHASE_MARGIN_WARN_DEG = 45.0
#: Under 20 deg a loop is close to oscillating: the closed-loop peak passes 9 dB and the
#: tolerance of the parts can tip it over (the same source; common practice).
PHASE_MARGIN_ERROR_DEG = 20.0
#: A remedy is chosen to give at least this much margin, a few degrees above the warning so
#: that the parts' tolerances keep it clear (ours).
PHASE_MARGIN_TARGET_DEG = 50.0

# --- output stage bias -------------------------------------------------------------------
#: A quiescent current under half Oliver's optimum (I_q R_E = V_T) leaves a gain dip through
#: crossover; over twice it, both halves conduct over a wide region and the gain rises there
#: instead ("gm doubling"), with more idle heat (ours: a factor of two either way, where the
#: distortion of the static transfer has roughly doubled).
QUIESCENT_LOW_FRACTION = 0.5
QUIESCENT_HIGH_FRACTION = 2.0
#: A quiescent current that more than doubles as the heatsink warms is worth knowing: the
#: idle heat and the crossover figures move with it (ours).
QUIESCENT_CLIMB_FACTOR = 2.0

# --- hum ---------------------------------------------------------------------------------
#: Hum at 1 m above about 20 dB(A) SPL is audible in a quiet room: a quiet living room at
#: night sits near 25-30 dB(A), and a steady tone is heard some way below a broadband
#: background of that level (common practice, no source).
HUM_AUDIBLE_SPL_A_DB = 20.0
#: A remedy aims the dominant path's hum this far under the A-weighted noise floor (and
#: under the audible threshold), so that hum no longer sets the floor (ours).
HUM_TARGET_MARGIN_DB = 6.0
#: The drop a supply filter's resistor may take at the stage's current, as a share of the
#: rail it filters (common practice, no source: a few percent costs little swing).
HUM_FILTER_DROP_FRACTION = 0.05
#: The largest capacitor a filter remedy suggests; past it, a regulator is the better
#: remedy (ours).
HUM_FILTER_MAX_CAP_F = 4.7e-3
#: The ripple rejection a regulator remedy reckons with: about 60 dB at 100 Hz is typical of
#: a three-terminal linear regulator without a bypassed adjust pin (from memory).
HUM_REGULATOR_REJECTION_DB = 60.0
