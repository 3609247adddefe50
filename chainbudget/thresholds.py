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
#: from memory). A dc load above rated/1.8 overheats the winding though the dc figure fits.
RMS_PER_DC_AMP = 1.8
#: Ripple at which the constant-current ripple figure stops being a close estimate (it
#: overstates the ripple more and more as the trough falls towards zero): a fifth of the
#: peak (ours; the approximation needs V_pp << V_pk).
LARGE_RIPPLE_FRACTION = 0.2
#: A dropout margin under this is in regulation on paper only: the part's dropout, the
#: mains and the diodes all spread (ours, a design allowance).
THIN_DROPOUT_MARGIN_V = 0.5
#: Off-load rise of small mains transformers (common practice, no source).
TYPICAL_REGULATION = (0.10, 0.25)

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
