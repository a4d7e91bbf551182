// The testing frame around the specimen: test control (strain rate over the
// gauge length, then crosshead speed after a switch strain, as ISO 6892-1
// Method A tests are commonly run), frame compliance and grip slack (so the
// crosshead travels more than the specimen stretches), a small toe while the
// specimen straightens, hold / resume / stop, force relaxation during a hold,
// and fracture as a force drop within milliseconds. Pure: time comes in as
// numbers, nothing is read or written. Settings are checked by check().
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "engine/result.hpp"
#include "engine/specimen.hpp"
#include "material.hpp"

namespace tensile::sim {

struct MachineConfig {
    // ISO 6892-1 Method A range 2 (0.00025 1/s, from memory: REFERENCES
    // ISO6892-MethodA) until switch_strain, then a crosshead speed; 0 means
    // range 4 (0.0067 1/s) over the parallel length.
    double strain_rate_per_s = 0.00025;
    double switch_strain = 0.01;
    double crosshead_speed_mm_s = 0;
    double compliance_mm_per_kN = 0.004;  // frame, load train and grips
    double slack_mm = 0.05;               // crosshead travel taken up while the grips seat
    double toe_mm = 0.003;                // extra extension seen while the specimen straightens
    double relax_share = 0.006;           // share of the force lost over a long hold past yield
    double relax_time_s = 2.0;
    double fracture_time_s = 0.0005;      // decay constant of the force at fracture
};

Result<MachineConfig> check(const MachineConfig& config, const SpecimenGeometry& geometry);

struct RigState {
    double time_s = 0;
    double strain = 0;        // specimen engineering strain (uniform over the parallel length)
    double force_N = 0;
    double extension_mm = 0;  // change of the extensometer gauge length (= L0), toe included
    double crosshead_mm = 0;
    bool held = false;
    bool stopped = false;
    bool fractured = false;
};

// A strain the run should time-stamp when the specimen first reaches it.
struct Mark {
    std::string name;           // key in the truth JSON, e.g. "max_force_s"
    double strain = 0;
    std::optional<double> time_s;
};

class Machine {
public:
    Machine(const CurveTable& curve, SpecimenGeometry geometry, MachineConfig config, double Fm_N,
            std::vector<Mark> marks);

    void advance_to(double time_s);
    void hold();
    void resume();
    void stop();

    [[nodiscard]] const RigState& state() const { return s_; }
    [[nodiscard]] const std::vector<Mark>& marks() const { return marks_; }
    [[nodiscard]] std::optional<double> fracture_time_s() const { return fracture_time_; }

private:
    [[nodiscard]] double crosshead_of(double strain, double force_N) const;
    [[nodiscard]] double force_of(double strain) const;
    void set_strain(double strain, double t0, double t1);
    void fracture_at(double time_s);

    const CurveTable& curve_;
    SpecimenGeometry g_;
    MachineConfig c_;
    double Fm_N_;
    std::vector<Mark> marks_;
    RigState s_;
    bool crosshead_control_ = false;
    double crosshead_target_ = 0;   // commanded crosshead position in crosshead control
    double relax_N_ = 0;            // force lost to relaxation, recovered on reloading
    double relax_goal_N_ = 0;
    double hold_since_ = 0;
    std::optional<double> fracture_time_;
    double fracture_force_N_ = 0;
    double fracture_strain_ = 0;
    double speed_after_fracture_ = 0;
};

}  // namespace tensile::sim
