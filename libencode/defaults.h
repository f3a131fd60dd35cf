/* defaults.h: the one default of each quantity that more than one verb (and
 * the Python package) offers, hidden (not installed, not exported). The
 * options' _init() functions take their values from here
 * (kw_protocol_defaults, kw_pattern_options_init,
 * kw_acquisition_options_init), and the command's help quotes the _TEXT form
 * beside each value, so that `plan`, `pattern`, `encode` and the package say
 * and use the same number. tests/ref/test_cli_help.py reads the help of the
 * verbs and checks that they agree. */
#ifndef KW_DEFAULTS_H
#define KW_DEFAULTS_H

/* Main field: 3 T, the commonest clinical research field (common practice,
 * no source). The tissue table has values at 1.5 T and 3 T. */
#define KWD_B0_T 3.0
#define KWD_B0_TEXT "3T"

/* Field of view: 256 mm, a head (common practice, no source). */
#define KWD_FOV_M 0.256
#define KWD_FOV_TEXT "256mm"

/* Gradient hardware of a current whole-body scanner: 40 mT/m, 150 T/m/s on
 * a 10 us raster (common practice, no source). */
#define KWD_GMAX_T_PER_M 40e-3
#define KWD_GMAX_TEXT "40mT/m"
#define KWD_SLEW_T_PER_M_PER_S 150.0
#define KWD_SLEW_TEXT "150T/m/s"
#define KWD_RASTER_S 10e-6
#define KWD_RASTER_TEXT "10us"

/* Receiver bandwidth per pixel: 250 Hz/pixel (common practice, no source);
 * the radial dwell of `pattern` is 1 / (250 Hz x N) for the same reason. */
#define KWD_BW_PER_PIXEL_HZ 250.0
#define KWD_BW_PER_PIXEL_TEXT "250Hz/pixel"

/* Longest spiral readout per interleaf: 10 ms. Off-resonance blurs a spiral
 * in proportion to its readout time (a 100 Hz offset turns through one cycle
 * in 10 ms), and at 3 T readouts of about 10 ms or less are the usual choice
 * (common practice, no source). `plan` said 16 ms and `pattern` 10 ms before;
 * the shorter, safer of the two was kept. */
#define KWD_SPIRAL_MAX_READOUT_S 10e-3
#define KWD_SPIRAL_MAX_READOUT_TEXT "10ms"

/* EPI shots: single-shot (common practice, no source). */
#define KWD_EPI_SHOTS 1
#define KWD_EPI_SHOTS_TEXT "1"

#endif
