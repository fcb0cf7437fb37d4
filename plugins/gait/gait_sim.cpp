#include "gait/gait_sim.hpp"

#include <mujoco/mujoco.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <memory>
#include <mutex>
#include <string>
#include <vector>

namespace tessera::gait {
namespace {

// MuJoCo prints warnings on stdout by default; an unstable run is reported through `valid`
// instead, so silence the process-wide hook once.
void silence_mujoco_warnings() {
  static std::once_flag once;
  std::call_once(once, [] { mju_user_warning = [](const char*) {}; });
}

mjModel* load_model(const std::string& model_file, const char* builtin_xml) {
  char error[1000] = "";
  mjModel* model = nullptr;
  if (!model_file.empty()) {
    model = mj_loadXML(model_file.c_str(), nullptr, error, sizeof error);
    if (!model) throw std::runtime_error("model_file '" + model_file + "': " + error);
    return model;
  }
  // The built-in model goes through MuJoCo's virtual file system (mjVFS is large: heap).
  const std::string name = "tessera-hexapod.xml";
  auto vfs = std::make_unique<mjVFS>();
  mj_defaultVFS(vfs.get());
  const int size = static_cast<int>(std::strlen(builtin_xml));
  if (mj_makeEmptyFileVFS(vfs.get(), name.c_str(), size) != 0)
    throw std::runtime_error("cannot hold the built-in hexapod model in memory");
  const int index = mj_findFileVFS(vfs.get(), name.c_str());
  std::memcpy(vfs->filedata[index], builtin_xml, static_cast<std::size_t>(size));
  model = mj_loadXML(name.c_str(), vfs.get(), error, sizeof error);
  mj_deleteVFS(vfs.get());
  if (!model) throw std::runtime_error(std::string("built-in hexapod model: ") + error);
  return model;
}

}  // namespace

HexapodSim::HexapodSim(const std::string& model_file, const char* builtin_xml,
                       GaitSettings settings)
    : settings_(settings) {
  silence_mujoco_warnings();
  model_ = load_model(model_file, builtin_xml);
  try {
    find_names();
    data_ = mj_makeData(model_);
    if (!data_) throw std::runtime_error("MuJoCo could not allocate the simulation data");
    apply_damage();
  } catch (...) {
    if (data_) mj_deleteData(data_);
    mj_deleteModel(model_);
    throw;
  }
}

HexapodSim::~HexapodSim() {
  mj_deleteData(data_);
  mj_deleteModel(model_);
}

double HexapodSim::timestep() const {
  return model_->opt.timestep;
}
double HexapodSim::joint_lower(std::size_t j) const {
  return original_lower_[j];
}
double HexapodSim::joint_upper(std::size_t j) const {
  return original_upper_[j];
}

void HexapodSim::find_names() {
  const std::string where = "hexapod model: ";
  auto id = [&](mjtObj type, const std::string& name, const char* what) {
    const int i = mj_name2id(model_, type, name.c_str());
    if (i < 0) throw std::runtime_error(where + "no " + what + " named '" + name + "'");
    return i;
  };
  floor_ = id(mjOBJ_GEOM, "floor", "geom");
  torso_body_ = id(mjOBJ_BODY, "torso", "body");
  const int root = model_->body_jntadr[torso_body_];
  if (root < 0 || model_->jnt_type[root] != mjJNT_FREE)
    throw std::runtime_error(where + "the torso must have a free joint first");
  root_qpos_ = model_->jnt_qposadr[root];
  for (std::size_t leg = 0; leg < kLegs; ++leg) {
    const std::string n = std::to_string(leg);
    foot_[leg] = id(mjOBJ_GEOM, "foot" + n, "geom");
    shin_body_[leg] = id(mjOBJ_BODY, "shin" + n, "body");
    if (model_->body_jntnum[shin_body_[leg]] != 0)
      throw std::runtime_error(where + "body 'shin" + n + "' must have no joint");
    for (std::size_t k = 0; k < kJointsPerLeg; ++k) {
      const std::size_t j = leg * kJointsPerLeg + k;
      const std::string name = (k == 0 ? "swing" : "lift") + n;
      actuator_[j] = id(mjOBJ_ACTUATOR, name, "actuator");
      if (model_->actuator_trntype[actuator_[j]] != mjTRN_JOINT)
        throw std::runtime_error(where + "actuator '" + name + "' must drive a joint");
      joint_[j] = model_->actuator_trnid[2 * actuator_[j]];
      if (model_->jnt_type[joint_[j]] != mjJNT_HINGE || !model_->jnt_limited[joint_[j]])
        throw std::runtime_error(where + "joint of actuator '" + name +
                                 "' must be a hinge with a range");
      original_lower_[j] = model_->jnt_range[2 * joint_[j]];
      original_upper_[j] = model_->jnt_range[2 * joint_[j] + 1];
      if (!(original_lower_[j] < 0.0 && original_upper_[j] > 0.0))
        throw std::runtime_error(where + "the range of joint '" + name + "' must contain 0");
    }
  }
}

void HexapodSim::apply_damage() {
  mjModel* m = model_;
  for (std::size_t leg = 0; leg < kLegs; ++leg) {
    const double s = settings_.leg_length_scale[leg];
    if (s == 1.0) continue;
    // The shin body hangs from the knee at its origin: scale every position along it, the
    // capsules' half-lengths, its centre of mass, its mass (~ length) and inertia (~ length^3,
    // a slender rod about its centre). s = 0 removes it from the contacts altogether.
    const int body = shin_body_[leg];
    for (int g = 0; g < m->ngeom; ++g) {
      if (m->geom_bodyid[g] != body) continue;
      for (int k = 0; k < 3; ++k) m->geom_pos[3 * g + k] *= s;
      if (m->geom_type[g] == mjGEOM_CAPSULE || m->geom_type[g] == mjGEOM_CYLINDER) {
        m->geom_size[3 * g + 1] *= s;
        m->geom_rbound[g] = m->geom_size[3 * g + 1] + m->geom_size[3 * g];
      }
      if (s == 0.0) {
        m->geom_contype[g] = 0;
        m->geom_conaffinity[g] = 0;
        m->geom_rgba[4 * g + 3] = 0.0f;
      }
    }
    for (int k = 0; k < 3; ++k) {
      m->body_ipos[3 * body + k] *= s;
      m->body_inertia[3 * body + k] *= s * s * s;
    }
    m->body_mass[body] *= s;
  }
  for (std::size_t j = 0; j < kJoints; ++j) {
    const double s = settings_.motor_strength[j];
    if (s == 1.0) continue;
    const int a = actuator_[j];
    m->actuator_gainprm[mjNGAIN * a] *= s;
    m->actuator_biasprm[mjNBIAS * a + 1] *= s;
    m->actuator_biasprm[mjNBIAS * a + 2] *= s;
    m->actuator_forcerange[2 * a] *= s;
    m->actuator_forcerange[2 * a + 1] *= s;
  }
  if (settings_.stuck_joint >= 0) {
    // The joint is locked by its own limits at the stuck angle (evaluate() starts it there).
    // qpos0 stays: MuJoCo measures hinge angles from it, so moving it would move the zero.
    const int j = joint_[static_cast<std::size_t>(settings_.stuck_joint)];
    m->jnt_range[2 * j] = settings_.stuck_angle;
    m->jnt_range[2 * j + 1] = settings_.stuck_angle;
  }
  // Recompute the constants MuJoCo derives from masses and the default pose.
  mj_setConst(m, data_);
}

GaitResult HexapodSim::evaluate(const double* genome, GaitRecord* record) {
  mjModel* m = model_;
  mjData* d = data_;
  GaitResult result;

  // Signal tables: the amplitude scales the joint's half range (the smaller side).
  std::array<std::vector<double>, kJoints> table;
  for (std::size_t j = 0; j < kJoints; ++j) {
    const double reach = std::min(-original_lower_[j], original_upper_[j]);
    const double* p = genome + j * kParamsPerJoint;
    table[j] = periodic_signal(reach * std::clamp(p[0], 0.0, 1.0), std::clamp(p[1], 0.0, 1.0),
                               std::clamp(p[2], 0.0, 1.0));
  }

  mj_resetData(m, d);
  if (settings_.stuck_joint >= 0)
    d->qpos[m->jnt_qposadr[joint_[static_cast<std::size_t>(settings_.stuck_joint)]]] =
        settings_.stuck_angle;
  if (settings_.start_height) d->qpos[root_qpos_ + 2] = *settings_.start_height;
  mj_forward(m, d);
  const double x0 = d->xpos[3 * torso_body_];
  const auto steps = static_cast<long>(std::llround(settings_.duration / m->opt.timestep));
  std::array<long, kLegs> touching{};
  std::array<bool, kLegs> was_down{};
  const long stride =
      record ? std::max(1L, static_cast<long>(std::llround(record->every / m->opt.timestep))) : 0;
  for (long step = 0; step < steps; ++step) {
    for (std::size_t j = 0; j < kJoints; ++j)
      d->ctrl[actuator_[j]] = static_cast<int>(j) == settings_.stuck_joint
                                  ? settings_.stuck_angle
                                  : signal_at(table[j], d->time, settings_.period);
    mj_step(m, d);
    std::array<bool, kLegs> down{};
    for (int c = 0; c < d->ncon; ++c) {
      const mjContact& contact = d->contact[c];
      const int a = contact.geom1;
      const int b = contact.geom2;
      if (a == floor_ || b == floor_) {
        const int other = a == floor_ ? b : a;
        for (std::size_t leg = 0; leg < kLegs; ++leg) down[leg] = down[leg] || other == foot_[leg];
      } else if (contact.dist < 0.0) {
        // Two parts of the robot touch (MuJoCo never reports parent-child pairs).
        result.self_collision = true;
      }
    }
    for (std::size_t leg = 0; leg < kLegs; ++leg) touching[leg] += down[leg] ? 1 : 0;
    if (record) {
      for (std::size_t leg = 0; leg < kLegs; ++leg)
        if (down[leg] && !was_down[leg]) {
          record->touch_x[leg].push_back(d->geom_xpos[3 * foot_[leg]]);
          record->touch_y[leg].push_back(d->geom_xpos[3 * foot_[leg] + 1]);
          record->touch_time[leg].push_back(d->time - m->opt.timestep);
        }
      // mj_step computed positions and contacts before it advanced time by one step.
      if (step % stride == 0) {
        record->time.push_back(d->time - m->opt.timestep);
        record->x.push_back(d->xpos[3 * torso_body_]);
        record->y.push_back(d->xpos[3 * torso_body_ + 1]);
        record->z.push_back(d->xpos[3 * torso_body_ + 2]);
        record->contact.push_back(down);
      }
    }
    was_down = down;
    // Tilted beyond 60 degrees: the torso's z axis has a vertical component below cos 60.
    if (d->xmat[9 * torso_body_ + 8] < 0.5) result.fell = true;
  }

  // mj_step leaves the positions of the last step uncomputed: bring them up to date.
  mj_kinematics(m, d);
  result.valid = d->warning[mjWARN_BADQACC].number == 0;
  for (int k = 0; k < 3; ++k)
    result.valid = result.valid && std::isfinite(d->xpos[3 * torso_body_ + k]);
  const double limit = settings_.max_speed * settings_.duration;
  result.distance = std::clamp(d->xpos[3 * torso_body_] - x0, -limit, limit);
  result.final_height = d->xpos[3 * torso_body_ + 2];
  if (record) {
    record->time.push_back(d->time);
    record->x.push_back(d->xpos[3 * torso_body_]);
    record->y.push_back(d->xpos[3 * torso_body_ + 1]);
    record->z.push_back(d->xpos[3 * torso_body_ + 2]);
    record->contact.push_back(was_down);
  }
  for (std::size_t leg = 0; leg < kLegs; ++leg)
    result.duty[leg] =
        steps > 0 ? static_cast<double>(touching[leg]) / static_cast<double>(steps) : 0.0;
  result.fitness = result.distance - (result.fell ? settings_.fall_penalty : 0.0) -
                   (result.self_collision ? settings_.collision_penalty : 0.0);
  return result;
}

}  // namespace tessera::gait
