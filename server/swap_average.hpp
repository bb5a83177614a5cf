// A reading by swap-and-average (dsp/swap_average.hpp): one capture with the inputs as
// wired, one with them swapped (input 1 on node B, input 2 on node A), combined so that the
// inputs' gain and phase mismatch cancels with no channel-match calibration, including a
// mismatch that changed since the last one (a touched gain knob). Two captures; the
// mismatch must hold still between them.
//
// The swapped capture is analysed with its two channels exchanged (input 2, which then
// reads node A, as the analysis's channel 1), so the tone is always found, tracked and
// settled on node A's strong signal even when node B is tiny (a short on the jig).
//
// What does not cancel:
//  - Input loading. Each input loads the node it reads, so node B is loaded by input 2
//    in the first capture and by input 1 in the second; the combined ratio is the
//    geometric mean of the two, i.e. to first order the divider loaded by the mean of the
//    two inputs' admittances. Nothing here corrects loading (as in measure_once): in the
//    part-low layout the load is a shunt across the part, which open/short compensation
//    taken the same swap-averaged way removes; what is left is second order in the
//    difference of the two inputs' admittances, |dY * Z|^2 / 8 or so. In the part-high
//    layout the load sits across Rref and scales the reading; an input-impedance
//    calibration must then use the mean of both inputs, not input 2's alone.
//  - Crosstalk between the inputs (it swaps with them), and a mismatch that drifts during
//    the two captures (half of the change stays).
#pragma once

#include <functional>
#include <optional>

#include "dsp/fixture_correction.hpp"
#include "server/measurement.hpp"

namespace tb {

/// connect(false): the inputs as wired; connect(true): the inputs swapped. It returns when
/// the connection is made (the simulated bench rewires itself; on a real card the engine
/// waits for the user). The inputs are left swapped.
/// The result has swap_averaged set and no channel_match; `fixture`, when given, must have
/// been measured swap-averaged too at the same frequency, Rref and layout. Throws as
/// measure_once; a ratio the bridge cannot solve throws dsp::AnalysisError
/// analysis.bridge_singular.
/// Example: measure_swap_averaged(card, request, std::nullopt,
///                                [&](bool s) { jig.inputs_swapped = s; card.reconnect(jig, part);
///                                });
MeasureResult measure_swap_averaged(AudioDevice& device, const MeasureRequest& request,
                                    const std::optional<dsp::FixtureStandards>& fixture,
                                    const std::function<void(bool swapped)>& connect);

}  // namespace tb
