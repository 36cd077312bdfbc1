// hallway/wiring.hpp: the wiring verdict (docs/design-format.md "Wiring verdict"): does the contact plan
// measure what it is placed to measure, in the design field and with the field reversed?
//
// Computed from what transport and noise already give for each field sign (SolveTransport: routes,
// partitioning constrictions, contact currents and voltages; SolveNoise: the colliders with their
// signed arriving streams, dilution and outputs), never re-derived:
//   - every amplifier: the partitioned current it receives (source, constriction, channel), the
//     collider outputs it receives, and the sources whose DC reaches it without crossing a constriction;
//   - every collider (a constriction found as one in either field): whether both inputs are dilute
//     streams from source constrictions and both outputs reach amplifiers;
//   - every source: where its current returns (floating contacts pass on what they receive);
//   - floating contacts used as voltage probes: the pairs, Hall (antisymmetric in B) or longitudinal
//     (symmetric), from the contact voltages at +B and -B.
// A field works when it has no problem. The named mistakes: the field sign (fails in the design field,
// works reversed), a swapped source and ground (swapping their roles makes the design field work), an
// amplifier upstream of its constriction, a source feeding an amplifier directly, a floating contact
// that passes a source's DC on and should be a cold ground, an island with no return.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"

namespace hallway {

struct WiringOptions {
  // A collider input is dilute when it carries at most this fraction of the bias of its feeding
  // constriction's hot input (the same limit as NoiseOptions::dilution_limit; common practice: 0.1).
  double dilution_limit = 0.1;
  // Try every source/ground and amplifier/ground role swap to name a swapped pair (one transport
  // solve each, on the same edge network).
  bool diagnose_swaps = true;
  bool IsValid(std::string* why) const;
};

struct WiringProblem {
  // Stable code. Named mistakes: "field-sign", "source-ground-swapped", "amplifier-upstream",
  // "source-feeds-amplifier", "float-should-be-ground", "island-no-return". Others:
  // "amplifier-sees-nothing", "collider-not-fed", "collider-input-not-dilute",
  // "collider-output-unmeasured", "source-returns", "contact-untouched", "current-nowhere".
  std::string code;
  bool mistake = false;       // one of the named mistakes
  std::vector<int> contacts;  // the contacts involved (at least one), design order of first mention
  std::vector<int> constrictions;
  std::string message;  // what is wrong, naming the contacts
  std::string fix;      // what to change
};

// What one amplifier receives in one field.
struct AmplifierView {
  int contact = 0;
  struct Partition {
    int source = 0, constriction = 0, channel = 0;
  };
  std::vector<Partition> partitioned;  // partitioned current from `source` through `constriction`
  std::vector<int> collider_outputs;   // colliders (constriction index) whose output reaches it
  std::vector<int> direct_sources;     // sources whose DC arrives along an edge that crosses no constriction
  bool sees_signal() const { return !partitioned.empty() || !collider_outputs.empty(); }
};

struct ColliderView {
  int constriction = 0, channel = 0;
  bool fed = false;                                // found as a collider in this field (a stream arrives at an input)
  int feed_first = -1, feed_second = -1;           // feeding constrictions (-1: straight from a contact)
  int contact_first = -1, contact_second = -1;     // the contact when an input comes straight from one
  std::vector<int> sources_first, sources_second;  // sources whose current feeds each input
  double dilution_first = 0.0, dilution_second = 0.0;  // NoiseResult's figures
  int output_first = -1, output_second = -1;           // contacts receiving most of each output
  bool inputs_dilute = false, outputs_measured = false;
};

struct SourceView {
  int contact = 0;
  double current_A = 0.0;  // TransportResult::current_A
  // Where its emitted current ends, floating contacts passing on what they receive: (contact, fraction).
  std::vector<std::pair<int, double>> returns;
};

struct FieldAssessment {
  double field_T = 0.0;
  std::vector<AmplifierView> amplifiers;
  std::vector<ColliderView> colliders;
  std::vector<SourceView> sources;
  std::vector<WiringProblem> problems;
  bool ok() const { return problems.empty(); }
};

// Two floating contacts used as a voltage probe pair.
struct VoltagePair {
  int first = 0, second = 0;
  bool hall = false;       // antisymmetric in B (Hall voltage); otherwise longitudinal
  double voltage_V = 0.0;  // V_first - V_second at the design field
  double reversed_voltage_V = 0.0;
};

// One line of the wiring card, at the design field.
struct CardRow {
  int contact = 0;
  Role role = Role::kGround;
  std::string connect;         // what to connect at the cryostat
  std::string purpose;         // what it is placed to see or do
  std::optional<double> bias_V;  // voltage sources
  std::optional<double> bias_A;  // current sources, into the device
  std::optional<double> voltage_V;  // expected DC potential (TransportResult::voltage_V)
  double current_A = 0.0;           // expected DC current into the device (TransportResult::current_A)
};

struct WiringVerdict {
  bool assessed = false;
  std::string not_assessed;        // why, when the edges could not be traced or solved
  bool ok = false;                 // works in the design field
  bool reversed_field_ok = false;  // works with the field reversed
  FieldAssessment design, reversed;
  // The diagnoses (field sign, swapped roles), then the design field's problems.
  std::vector<WiringProblem> problems;
  std::vector<CardRow> card;
  std::vector<VoltagePair> voltage_pairs;
  std::string summary;  // the one line: works / fails but works reversed / fails in both, with the reason
};

// From the transport results of both fields on networks traced from one geometry. The currents and
// voltages on the card are `design_transport`'s own numbers.
WiringVerdict AssessWiring(const Design& design, const EdgeNetwork& design_network,
                           const TransportResult& design_transport, const EdgeNetwork& reversed_network,
                           const TransportResult& reversed_transport, const WiringOptions& options = {});

// Traces both fields on `geometry` and solves the transport first; a network or transport error
// leaves `assessed` false with the reason.
WiringVerdict AssessWiring(const Design& design, const ChannelGeometry& geometry, const WiringOptions& options = {});

// The label of a result computed at `field_T`: "" for the design field, otherwise says that the
// design does not use the reversed field (or, when only the reversed field works, that it would).
std::string ReversedFieldLabel(const Design& design, const WiringVerdict& verdict, double field_T);

}  // namespace hallway
