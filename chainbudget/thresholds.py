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
#: A battery's internal resistance that costs more clip power than this is worth a warning,
#: dB (the issue's figure; about the least change in loudness a listener notices on music,
#: common practice, no source).
BATTERY_SAG_COST_DB = 1.0
#: Off-load rise of small mains transformers (common practice, no source).
TYPICAL_REGULATION = (0.10, 0.25)
