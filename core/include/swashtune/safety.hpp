// The cautions shown wherever the program presents settings or results a
// person could act on. One text, used by the command line and the desktop.
#pragma once

namespace swashtune {

// One line for the end of command-line reports.
inline constexpr const char* safety_notice_short =
    "Caution: simulated figures only. Hydraulic systems store pressure and oil jets cause injection injuries: "
    "lock out and relieve pressure before adjusting, verify every setting with a gauge, and follow local codes, "
    "the machine's documentation and qualified practice.";

// The same for reports on a recording from a machine (field, fit).
inline constexpr const char* safety_notice_recording =
    "Caution: a recording shows one machine under one set of conditions, and a fitted model only what fits it. "
    "Hydraulic systems store pressure and oil jets cause injection injuries: lock out and relieve pressure before "
    "adjusting, verify every setting with a gauge, and follow local codes, the machine's documentation and "
    "qualified practice.";

// The full text for Help and the README.
inline constexpr const char* safety_notice_full =
    "Swashtune computes what a model predicts; it does not know your machine. Before acting on a figure:\n"
    "- Stored pressure: accumulators, trapped lines and cylinders hold pressure after the pump stops. "
    "Relieve it and confirm zero pressure on a gauge before opening anything.\n"
    "- Injection injury: a pinhole jet of oil can penetrate skin. Never feel for leaks by hand; "
    "any injection is a medical emergency.\n"
    "- Lock-out: isolate and lock out the drive before adjusting or working on the pump or its controls.\n"
    "- Compensator setting: make it at no flow (outlet blocked by a valve, never by the adjustment alone) "
    "with a calibrated gauge on the outlet, raising the setting slowly, and with a relief valve set above it.\n"
    "- Verify: confirm every simulated setting on the machine with a gauge.\n"
    "Local codes, the machine's documentation and qualified practice take precedence over this program.";

}  // namespace swashtune
