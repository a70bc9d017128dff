"""Default physical figures, each with where it comes from.

Every constant names its source beside it.  Provenance labels:

- **verified**: the figure was read in a public document during development (named);
- **from memory**: recalled from the literature or a standard, not re-read; check before relying
  on it for anything but planning studies;
- **assumption**: a planning choice with no published source (common practice or our own).

ITU-T table limits (G.652.D, G.654.E) are kept here too, so tests can check that the default
fiber figures lie inside them.
"""

from __future__ import annotations

import math

__all__ = [
    "G652D_TABLE",
    "G652D_MAX_ATTENUATION_1550_DB_PER_KM",
    "G652D_MAX_ATTENUATION_1310_1625_DB_PER_KM",
    "G654E_TABLE",
    "G654E_MAX_ATTENUATION_1550_DB_PER_KM",
    "ATTENUATION_G652D_DB_PER_KM",
    "ATTENUATION_G654E_DB_PER_KM",
    "ATTENUATION_COUPLED_CORE_MCF_DB_PER_KM",
    "GD_SPREAD_RANDOM_PS_PER_SQRT_KM",
    "MDL_RANDOM_DB_PER_SQRT_KM",
    "CROSSTALK_WEAK_DB_PER_KM",
    "CROSSTALK_WEAK_MEASURED_DB",
    "CROSSTALK_WEAK_MEASURED_KM",
    "LANE_GBPS",
    "LINE_RATE_GBPS",
    "SYMBOL_RATE_GBAUD",
    "POLARIZATIONS",
    "REACH_KM",
    "POWER_BUDGET_DB",
    "CROSSTALK_LIMIT_DB",
    "MDL_LIMIT_DB",
    "SAMPLES_PER_SYMBOL",
    "MIMO_BASE_TAPS",
    "TAP_MARGIN",
    "MAX_MIMO_TAPS",
    "MODULE_POWER_W",
    "MIMO_PJ_PER_CMUL",
    "SWITCH_INSERTION_LOSS_DB",
    "CONNECTOR_LOSS_DB",
    "CONNECTORS_PER_CABLE",
    "SPLICE_LOSS_DB",
    "SPLICE_SPACING_KM",
    "SPAN_KM",
    "AMPLIFIER_NF_DB",
    "LAUNCH_DBM",
    "OSNR_MARGIN_DB",
    "FIFO_LOSS_DB",
    "FIFO_CROSSTALK_DB",
    "WSS_PASS_DB",
    "FIBER_XC_DB",
    "WSS_PASSES_EXPRESS",
    "BAND_GHZ",
    "GRID_GRANULARITY_GHZ",
    "PLANCK_J_S",
    "SPEED_OF_LIGHT_M_S",
    "REFERENCE_WAVELENGTH_NM",
    "OSNR_REFERENCE_GHZ",
    "NONLINEAR_INDEX_M2_PER_W",
    "EFFECTIVE_AREA_G652D_UM2",
    "DISPERSION_G652D_PS_PER_NM_KM",
    "EFFECTIVE_AREA_G654E_UM2",
    "DISPERSION_G654E_PS_PER_NM_KM",
    "EFFECTIVE_AREA_WEAK_MCF_UM2",
    "GROUP_CROSSTALK_DB_PER_KM",
    "CLADDING_STANDARD_UM",
    "WEAK_CORES_IN_STANDARD_CLADDING",
    "WEAK_CORES_IN_STANDARD_CLADDING_O_BAND",
    "REQUIRED_OSNR_400ZR_DB",
]

# --------------------------------------------------------------------------------------------
# ITU-T limits on cabled-fiber attenuation (the defaults below must lie within them)
# --------------------------------------------------------------------------------------------

# ITU-T G.652 (11/2016), clause 7 tables, Table 2 "G.652.D attributes" (Table 4 in the 11/2009
# edition), cable attributes.  Table name and numbering verified (ITU-T G.652 11/2016 summary
# page); the values are from memory.
G652D_TABLE = "ITU-T G.652 (11/2016) Table 2 'G.652.D attributes', cable attributes (clause 6.1 / 7)"
G652D_MAX_ATTENUATION_1310_1625_DB_PER_KM = 0.40  # from memory
G652D_MAX_ATTENUATION_1550_DB_PER_KM = 0.30  # from memory

# ITU-T G.654 (03/2020), clause 7.1 "Attenuation coefficient" (cable attribute) and clause 8
# "Recommended value tables", G.654.E table.  Clause numbers verified (ITU-T G.654 03/2020 table
# of contents); the value is from memory.
G654E_TABLE = "ITU-T G.654 (03/2020) clause 8 recommended value tables, G.654.E attributes (clause 7.1)"
G654E_MAX_ATTENUATION_1550_DB_PER_KM = 0.23  # from memory

# --------------------------------------------------------------------------------------------
# Default fiber attenuation at 1550 nm (cabled)
# --------------------------------------------------------------------------------------------

# G.652.D-like cable: verified, YOFC FullBand G.652.D aerial cable datasheet, "valor maximo"
# 0.22 dB/km at 1550 nm (another vendor cable sheet gives <= 0.20 dB/km).
ATTENUATION_G652D_DB_PER_KM = 0.22

# G.654.E-like cable: verified, 0.166 dB/km in the G.654.E parameter set of IWCS webinar 85
# (Corning, as reproduced in a public repository) and 0.168 dB/km for the G.654.E reference span
# of a published hollow-core-fiber experiment; rounded up to 0.17.
ATTENUATION_G654E_DB_PER_KM = 0.17

# Randomly coupled 4-core fiber, 125 um cladding: verified, 0.158 dB/km at 1550 nm (Sumitomo
# Electric announcement of T. Hayashi et al., "Record-low spatial mode dispersion and ultra-low
# loss coupled multi-core fiber for ultra-long-haul transmission", JLT 35(3), 2017).
ATTENUATION_COUPLED_CORE_MCF_DB_PER_KM = 0.158

# --------------------------------------------------------------------------------------------
# Coupling figures of multicore fiber
# --------------------------------------------------------------------------------------------

# Spatial-mode-dispersion (RMS group-delay spread) coefficient of randomly coupled MCF:
# verified, 6.1 ps/sqrt(km) over 1520-1580 nm, same fiber and source as above.
GD_SPREAD_RANDOM_PS_PER_SQRT_KM = 6.1

# Mode-dependent-loss coefficient of randomly coupled fiber.  The sqrt(L) law in the
# small-MDL regime is from K.-P. Ho and J. M. Kahn, "Mode-dependent loss and gain: statistics
# and effect on mode-division multiplexing", Opt. Express 19(17), 2011 (arXiv 1108.4488).
# The coefficient is an assumption (no published per-sqrt(km) figure verified): 0.05 dB/sqrt(km)
# gives 0.5 dB after 100 km, small next to fan-in/fan-out and amplifier MDL.
MDL_RANDOM_DB_PER_SQRT_KM = 0.05

# Weakly coupled (trench-assisted) 7-core fiber: verified, T. Hayashi et al., "Uncoupled
# multi-core fiber enhancing signal-to-noise ratio", Opt. Express 20(26) B94, 2012: total mean
# crosstalk to the centre core -53 dB after 6.99 km ("equivalent to -42.5 dB after 80 km").
CROSSTALK_WEAK_MEASURED_DB = -53.0
CROSSTALK_WEAK_MEASURED_KM = 6.99
# Referred to 1 km with the linear-in-power growth (10 log10 L): -61.4 dB.
CROSSTALK_WEAK_DB_PER_KM = CROSSTALK_WEAK_MEASURED_DB - 10.0 * math.log10(CROSSTALK_WEAK_MEASURED_KM)

# --------------------------------------------------------------------------------------------
# Coherent DCI transceiver (400ZR class)
# --------------------------------------------------------------------------------------------

# 400 Gb/s single-carrier coherent lane: verified, OIF 400ZR project page ("single-carrier 400G,
# coherent detection").
LANE_GBPS = 400.0
# Line rate with FEC and framing: verified, 478.75 Gb/s DP-16QAM in a vendor 400G 80 km
# QSFP-DD datasheet (Huawei 02313LHH).
LINE_RATE_GBPS = 478.75
POLARIZATIONS = 2
# Symbol rate = line rate / (2 polarizations x 4 bit of 16QAM) = 59.84 GBd; derived from the
# verified line rate (the OIF 400ZR figure of 59.84375 GBd is from memory and agrees).
SYMBOL_RATE_GBAUD = LINE_RATE_GBPS / (POLARIZATIONS * 4)
# Reach: verified, OIF 400ZR project page, "amplified DWDM applications with distances up to 120 km".
REACH_KM = 120.0
# Loss budget: verified, the same vendor datasheet: single-span links with loss below 22 dB
# ("standard-defined") need only a booster amplifier and no site survey.  Kept for old scenarios
# only: every cable is now an amplified line judged by its GSNR (docs/physics.md), so neither
# this budget nor CROSSTALK_LIMIT_DB below decides feasibility any more.
POWER_BUDGET_DB = 22.0
# Inter-core crosstalk tolerated by DP-16QAM for about 1 dB penalty: from memory (P. J. Winzer
# et al., "Penalties from in-band crosstalk for advanced optical modulation formats", ECOC 2011).
CROSSTALK_LIMIT_DB = -24.0
# Highest path MDL accepted: assumption (planning choice, no source).
MDL_LIMIT_DB = 6.0
# Module power of a 400ZR QSFP-DD/OSFP pluggable: from memory (about 15 W; a vendor 400ZR+
# datasheet verified at 21 W typical, a 400ZR module draws less).
MODULE_POWER_W = 15.0

# --------------------------------------------------------------------------------------------
# DSP
# --------------------------------------------------------------------------------------------

# T/2 fractionally spaced equalizer: common practice, no source.
SAMPLES_PER_SYMBOL = 2.0
# Taps of the per-lane 2x2 polarization equalizer for residual chromatic dispersion, PMD and
# transceiver filtering (the bulk CD is removed by a static equalizer first): from memory.
MIMO_BASE_TAPS = 15
# Equalizer window in units of the RMS group-delay spread.  Under strong coupling the group
# delays of many modes follow a semicircle law of radius 2 sigma (Ho & Kahn, JLT 2011), so the
# impulse response is about 4 sigma wide: from memory.
TAP_MARGIN = 4.0
# Longest equalizer a DSP offers: assumption (planning choice, no source).
MAX_MIMO_TAPS = 256
# Energy of one complex multiplication in the MIMO equalizer (multiplier, adders and memory
# access): assumption, order of magnitude for 7 nm CMOS, no source.
MIMO_PJ_PER_CMUL = 0.5

# --------------------------------------------------------------------------------------------
# Passive losses
# --------------------------------------------------------------------------------------------

# One pass through a 1xN wavelength-selective switch at an intermediate site: from memory
# (typical datasheet insertion loss 5-7 dB).
SWITCH_INSERTION_LOSS_DB = 6.0
# One mated connector pair: from memory (0.5 dB typical planning value; TIA-568 allows 0.75 dB).
CONNECTOR_LOSS_DB = 0.5
# Connectors per cable: one patch at each end (common practice, no source).
CONNECTORS_PER_CABLE = 2
# One fusion splice: from memory (0.1 dB typical; TIA-568 allows 0.3 dB).
SPLICE_LOSS_DB = 0.1
# Cable sections between splices (reel length): from memory (4-6 km typical).
SPLICE_SPACING_KM = 5.0

# --------------------------------------------------------------------------------------------
# Amplified line and SDM parts (``[line]``)
# --------------------------------------------------------------------------------------------

# Amplifier spacing of terrestrial lines: common practice, no source (80 km is the usual
# planning span).
SPAN_KM = 80.0
# EDFA noise figure: from memory (4.5-5.5 dB typical of datasheets).
AMPLIFIER_NF_DB = 5.0
# Launch power per channel per core: None means each span is launched at its own optimum under
# the GN model, P_opt = (P_ASE / (2 eta))^(1/3) (P. Poggiolini, JLT 30(24), 2012; setting every
# span to its own optimum is the "LOGO" strategy of Poggiolini et al., OFC 2013, from memory).
LAUNCH_DBM: float | None = None
# OSNR margin kept above a class's requirement (ageing, repairs, filtering not modelled):
# common practice, no source.
OSNR_MARGIN_DB = 2.0
# Fan-in/fan-out device of a multicore fiber.  A recent research device reaches about 0.6 dB
# average coupling loss and crosstalk below -65 dB, and reports about 20 dB more crosstalk with
# the common bridge-fiber construction (verified: W. Ji et al., "Spacing-tailored multicore fiber
# interface for efficient FIFO devices", JLT 40, 2022, abstract).  Our defaults sit on the side of
# deployed parts: 1 dB and -50 dB (assumption informed by that source; the 0.5-1.5 dB and
# -40 to -60 dB are from memory).
FIFO_LOSS_DB = 1.0
FIFO_CROSSTALK_DB = -50.0
# One pass through a wavelength-selective switch: from memory (typical datasheet 5-7 dB).
WSS_PASS_DB = SWITCH_INSERTION_LOSS_DB
# WSS passes of a route-and-select node: one at the input degree and one at the output degree
# for an express channel, one for add and one for drop: common practice, no source.
WSS_PASSES_EXPRESS = 2
# One pass through a fiber cross-connect (optical circuit switch): from memory (1-3 dB).
FIBER_XC_DB = 2.0
# Optical band available to the channels of one core: the C band, about 4.8 THz (64 x 75 GHz or
# 96 x 50 GHz): from memory.
BAND_GHZ = 4800.0
# Slot widths of the flexible grid are multiples of 12.5 GHz: ITU-T G.694.1 (flexible DWDM grid;
# named in docs/REFERENCES, clause not re-read).
GRID_GRANULARITY_GHZ = 12.5

# --------------------------------------------------------------------------------------------
# Physical constants and the OSNR reference bandwidth
# --------------------------------------------------------------------------------------------

# Exact by the definition of the SI (2019): Planck constant and speed of light.
PLANCK_J_S = 6.62607015e-34
SPEED_OF_LIGHT_M_S = 299_792_458.0
# Wavelength at which fiber figures are quoted and OSNR is referred: 1550 nm (common practice).
REFERENCE_WAVELENGTH_NM = 1550.0
# OSNR reference bandwidth, 0.1 nm at 1550 nm = 12.48 GHz, quoted as 12.5 GHz: common practice
# (the 0.1 nm convention of OSNR specifications).
OSNR_REFERENCE_GHZ = 12.5
# Nonlinear refractive index of silica: from memory (2.6e-20 m^2/W, G. P. Agrawal, "Nonlinear
# Fiber Optics"; published values lie between about 2.2e-20 and 2.7e-20).
NONLINEAR_INDEX_M2_PER_W = 2.6e-20

# --------------------------------------------------------------------------------------------
# Nonlinearity and dispersion of fiber cores (fiber-type keys effective_area_um2,
# dispersion_ps_per_nm_km; a fiber type without them uses the G.652.D figures)
# --------------------------------------------------------------------------------------------

# G.652.D-class fiber at 1550 nm: effective area about 80 um^2 (from memory; G.652 specifies the
# mode field diameter, 8.6-9.5 um at 1310 nm, not the area) and chromatic dispersion
# 17 ps/(nm km) (verified: "+17 ps/(km nm)" at 1550 nm for standard single-mode fiber in
# M.-J. Li and H. Chen (Corning), "New optical fibers for high-capacity transmission systems",
# 2014 review, section 1).
EFFECTIVE_AREA_G652D_UM2 = 80.0
DISPERSION_G652D_PS_PER_NM_KM = 17.0
# G.654.E-class fiber: effective area about 125 um^2 (G.654.E's nominal range is about 115-135
# um^2) and dispersion about 21 ps/(nm km) at 1550 nm (both from memory; ITU-T G.654 not re-read).
EFFECTIVE_AREA_G654E_UM2 = 125.0
DISPERSION_G654E_PS_PER_NM_KM = 21.0
# Weakly coupled trench-assisted 7-core fiber: "effective areas larger than 120 um^2" (verified:
# T. Hayashi et al., Opt. Express 20(26) B94, 2012, abstract: the fiber of the crosstalk default).
EFFECTIVE_AREA_WEAK_MCF_UM2 = 120.0
# Crosstalk between the coupled groups of a randomly coupled fiber with several groups:
# assumption: the groups are kept apart like the cores of a weakly coupled fiber, so the weak
# crosstalk default applies (no published multi-group figure verified).
GROUP_CROSSTALK_DB_PER_KM = CROSSTALK_WEAK_DB_PER_KM

# --------------------------------------------------------------------------------------------
# Cladding
# --------------------------------------------------------------------------------------------

# Standard cladding diameter of telecom fiber: 125 um (from memory, ITU-T G.652).
CLADDING_STANDARD_UM = 125.0
# Weakly coupled cores a standard 125 um cladding fits with low crosstalk and bend loss: about 4
# for wideband (C+L) use, about 8 for the O band only: common practice, no source.
WEAK_CORES_IN_STANDARD_CLADDING = 4
WEAK_CORES_IN_STANDARD_CLADDING_O_BAND = 8

# --------------------------------------------------------------------------------------------
# Transceiver class requirements
# --------------------------------------------------------------------------------------------

# Required OSNR (0.1 nm) of a 400ZR module: 26 dB.  Verified only in a secondary source (an
# engineering article on 400ZR performance giving 26 dB minimum OSNR tolerance and 120 km
# amplified reach); the OIF 400ZR implementation agreement itself was not re-read.
REQUIRED_OSNR_400ZR_DB = 26.0
