#include "wvr/retrieval.hpp"

#include <ceres/ceres.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <utility>

#include "wvr/error.hpp"

namespace wvr {

void RetrievalOptions::validate() const {
  auto check_prior = [](const char* name, const std::optional<GaussianPrior>& prior) {
    if (!prior) return;
    require_finite(std::string(name) + ".mean", prior->mean);
    require_in_range(std::string(name) + ".sigma", prior->sigma, 1e-12, 1e12);
  };
  check_prior("pwv_prior_mm", pwv_prior_mm);
  check_prior("liquid_prior_kg_m2", liquid_prior_kg_m2);
  check_prior("temperature_offset_prior_k", temperature_offset_prior_k);
  require_in_range("channel_offset_prior_sigma_k", channel_offset_prior_sigma_k, 1e-6, 1e6, "K");
  require_in_range("gain_prior_sigma", gain_prior_sigma, 1e-9, 10.0);
  require_in_range("temperature_offset_limit_k", temperature_offset_limit_k, 0.0, 100.0, "K");
  if (max_iterations < 1 || max_iterations > 10000) {
    throw InvalidInput("max_iterations = " + std::to_string(max_iterations) +
                       " is outside [1, 10000]");
  }
}

const char* to_string(RetrievalStatus status) {
  switch (status) {
    case RetrievalStatus::kConverged:
      return "converged";
    case RetrievalStatus::kNoConvergence:
      return "no convergence";
    case RetrievalStatus::kInvalidInput:
      return "invalid input";
    case RetrievalStatus::kOutOfDomain:
      return "out of domain";
    case RetrievalStatus::kSolverFailure:
      return "solver failure";
  }
  return "unknown";
}

std::string RetrievalResult::brief_report() const {
  std::ostringstream out;
  out.precision(4);
  out << to_string(status) << ": pwv " << pwv_mm << " +/- " << pwv_sigma_mm << " mm";
  for (std::size_t i = 1; i < parameter_names.size(); ++i) {
    const std::string& name = parameter_names[i];
    if (name == "liquid_kg_m2")
      out << ", liquid " << liquid_kg_m2 << " +/- " << liquid_sigma_kg_m2 << " kg/m^2";
    if (name == "temperature_offset_k") {
      out << ", dT " << temperature_offset_k << " +/- " << temperature_offset_sigma_k << " K";
    }
    if (name == "gain") out << ", gain " << gain;
  }
  if (!channel_offsets_k.empty()) out << ", " << channel_offsets_k.size() << " channel offsets";
  out << ", chi2/dof " << chi2_per_dof << " (dof " << dof << "), " << iterations << " iterations";
  if (!message.empty()) out << " [" << message << "]";
  return out.str();
}

namespace {

// Parameter vector layout shared by the cost function and the result.
struct Layout {
  int liquid = -1, temperature = -1, offsets = -1, gain = -1, size = 1;
  int priors = 0;
};

Layout make_layout(const RetrievalOptions& o, int channels) {
  Layout l;
  if (o.fit_liquid) l.liquid = l.size++;
  if (o.fit_temperature_offset) l.temperature = l.size++;
  if (o.calibration == CalibrationTerms::kChannelOffsets) {
    l.offsets = l.size;
    l.size += channels;
  } else if (o.calibration == CalibrationTerms::kCommonGain) {
    l.gain = l.size++;
  }
  l.priors = (o.pwv_prior_mm ? 1 : 0) + (o.fit_liquid && o.liquid_prior_kg_m2 ? 1 : 0) +
             (o.fit_temperature_offset && o.temperature_offset_prior_k ? 1 : 0) +
             (l.offsets >= 0 ? channels : 0) + (l.gain >= 0 ? 1 : 0);
  return l;
}

// Holds its own copy of the options: a reference into the Retriever would dangle once the
// Retriever is moved (the night retrieval moves them into per-node tools).
class ChannelCost final : public ceres::CostFunction {
 public:
  ChannelCost(const FastSkyModel& model, RetrievalOptions options, const Layout& layout)
      : model_(model), options_(std::move(options)), layout_(layout), ws_(model.make_workspace()) {
    const std::size_t c = model.channel_count();
    set_num_residuals(static_cast<int>(c) + layout.priors);
    mutable_parameter_block_sizes()->push_back(layout.size);
    tb_.resize(c);
    d_pwv_.resize(c);
    d_t_.resize(c);
    d_liquid_.resize(c);
  }

  void set_input(const RetrievalInput& input) { input_ = input; }
  FastModelStatus last_status() const { return last_status_; }
  const std::vector<double>& model_brightness() const { return predicted_; }

  bool Evaluate(double const* const* parameters,
                double* residuals,
                double** jacobians) const override {
    const double* x = parameters[0];
    const std::size_t nc = model_.channel_count();
    const double liquid = layout_.liquid >= 0 ? x[layout_.liquid] : 0.0;
    const double dt =
        input_.temperature_offset_k + (layout_.temperature >= 0 ? x[layout_.temperature] : 0.0);
    const double gain = layout_.gain >= 0 ? x[layout_.gain] : 1.0;
    // The temperature term enters the model value; the other derivatives only the Jacobian,
    // which the solver does not ask for when it evaluates a trial step's cost.
    const bool want_t = layout_.temperature >= 0 || input_.temperature_offset_k != 0.0;
    const bool want_jacobian = jacobians != nullptr && jacobians[0] != nullptr;
    FastSkyJacobians jac{
        want_jacobian ? std::span<double>(d_pwv_) : std::span<double>(),
        want_t ? std::span<double>(d_t_) : std::span<double>(),
        want_jacobian && layout_.liquid >= 0 ? std::span<double>(d_liquid_) : std::span<double>()};
    last_status_ = model_.evaluate(FastSkyState{x[0], input_.elevation_deg, liquid}, ws_, tb_, jac);
    if (last_status_ != FastModelStatus::kOk) return false;
    const int p = layout_.size;
    double* j = jacobians != nullptr ? jacobians[0] : nullptr;
    if (j != nullptr) std::fill(j, j + num_residuals() * p, 0.0);
    predicted_.resize(nc);
    for (std::size_t c = 0; c < nc; ++c) {
      const double model_k = tb_[c] + (want_t ? dt * d_t_[c] : 0.0);
      const double offset = layout_.offsets >= 0 ? x[layout_.offsets + static_cast<int>(c)] : 0.0;
      predicted_[c] = gain * model_k + offset;
      const double inv_sigma = 1.0 / input_.noise_k[c];
      residuals[c] = (predicted_[c] - input_.brightness_k[c]) * inv_sigma;
      if (j == nullptr) continue;
      double* row = j + c * static_cast<std::size_t>(p);
      row[0] = gain * d_pwv_[c] * inv_sigma;
      if (layout_.liquid >= 0) row[layout_.liquid] = gain * d_liquid_[c] * inv_sigma;
      if (layout_.temperature >= 0) row[layout_.temperature] = gain * d_t_[c] * inv_sigma;
      if (layout_.offsets >= 0) row[layout_.offsets + static_cast<int>(c)] = inv_sigma;
      if (layout_.gain >= 0) row[layout_.gain] = model_k * inv_sigma;
    }
    // Priors.
    std::size_t r = nc;
    auto prior = [&](int index, double mean, double sigma) {
      residuals[r] = (x[index] - mean) / sigma;
      if (j != nullptr)
        j[r * static_cast<std::size_t>(p) + static_cast<std::size_t>(index)] = 1.0 / sigma;
      ++r;
    };
    if (options_.pwv_prior_mm) prior(0, options_.pwv_prior_mm->mean, options_.pwv_prior_mm->sigma);
    if (layout_.liquid >= 0 && options_.liquid_prior_kg_m2) {
      prior(layout_.liquid, options_.liquid_prior_kg_m2->mean, options_.liquid_prior_kg_m2->sigma);
    }
    if (layout_.temperature >= 0 && options_.temperature_offset_prior_k) {
      prior(layout_.temperature, options_.temperature_offset_prior_k->mean,
            options_.temperature_offset_prior_k->sigma);
    }
    if (layout_.offsets >= 0) {
      for (std::size_t c = 0; c < nc; ++c) {
        prior(layout_.offsets + static_cast<int>(c), 0.0, options_.channel_offset_prior_sigma_k);
      }
    }
    if (layout_.gain >= 0) prior(layout_.gain, 1.0, options_.gain_prior_sigma);
    return true;
  }

 private:
  const FastSkyModel& model_;
  const RetrievalOptions options_;
  Layout layout_;
  RetrievalInput input_;
  mutable FastSkyModel::Workspace ws_;
  mutable std::vector<double> tb_, d_pwv_, d_t_, d_liquid_, predicted_;
  mutable FastModelStatus last_status_ = FastModelStatus::kOk;
};

}  // namespace

struct Retriever::Impl {
  Impl(const FastSkyModel& model, const RetrievalOptions& options)
      : layout(make_layout(options, static_cast<int>(model.channel_count()))),
        cost(model, options, layout),
        x(static_cast<std::size_t>(layout.size), 0.0),
        probe_ws(model.make_workspace()),
        probe_tb(model.channel_count()) {
    ceres::Problem::Options problem_options;
    problem_options.cost_function_ownership = ceres::DO_NOT_TAKE_OWNERSHIP;
    problem = std::make_unique<ceres::Problem>(problem_options);
    problem->AddResidualBlock(&cost, nullptr, x.data());
    problem->SetParameterLowerBound(x.data(), 0, 0.0);
    problem->SetParameterUpperBound(x.data(), 0, model.options().max_pwv_mm);
    if (layout.liquid >= 0) {
      problem->SetParameterLowerBound(x.data(), layout.liquid, 0.0);
      problem->SetParameterUpperBound(x.data(), layout.liquid,
                                      model.options().max_liquid_water_path_kg_m2);
    }
    if (layout.temperature >= 0) {
      problem->SetParameterLowerBound(x.data(), layout.temperature,
                                      -options.temperature_offset_limit_k);
      problem->SetParameterUpperBound(x.data(), layout.temperature,
                                      options.temperature_offset_limit_k);
    }
    if (layout.gain >= 0) {
      problem->SetParameterLowerBound(x.data(), layout.gain, 0.5);
      problem->SetParameterUpperBound(x.data(), layout.gain, 1.5);
    }
    solver_options.linear_solver_type = ceres::DENSE_QR;
    solver_options.logging_type = ceres::SILENT;
    solver_options.minimizer_progress_to_stdout = false;
    solver_options.max_num_iterations = options.max_iterations;
    solver_options.num_threads = 1;
    solver_options.function_tolerance = 1e-12;
    solver_options.gradient_tolerance = 1e-12;
    solver_options.parameter_tolerance = 1e-10;
  }

  Layout layout;
  ChannelCost cost;
  std::vector<double> x;
  std::unique_ptr<ceres::Problem> problem;
  ceres::Solver::Options solver_options;
  FastSkyModel::Workspace probe_ws;
  std::vector<double> probe_tb;
};

Retriever::Retriever(const FastSkyModel& model, RetrievalOptions options)
    : model_(&model), options_(std::move(options)) {
  options_.validate();
  impl_ = std::make_unique<Impl>(*model_, options_);
}

Retriever::~Retriever() = default;
Retriever::Retriever(Retriever&&) noexcept = default;

RetrievalResult Retriever::fit(const RetrievalInput& input) {
  RetrievalResult result;
  const std::size_t nc = model_->channel_count();
  if (input.brightness_k.size() != nc || input.noise_k.size() != nc) {
    result.message = "expected " + std::to_string(nc) + " channels, got brightness_k " +
                     std::to_string(input.brightness_k.size()) + " and noise_k " +
                     std::to_string(input.noise_k.size());
    return result;
  }
  for (std::size_t c = 0; c < nc; ++c) {
    if (!std::isfinite(input.brightness_k[c]) || input.brightness_k[c] < 0.0 ||
        input.brightness_k[c] > 400.0) {
      result.message =
          describe_value("brightness_k[" + std::to_string(c) + "]", input.brightness_k[c]) +
          " is not a sky brightness";
      return result;
    }
    if (!(input.noise_k[c] > 0.0) || !std::isfinite(input.noise_k[c])) {
      result.message = describe_value("noise_k[" + std::to_string(c) + "]", input.noise_k[c]) +
                       " is not positive";
      return result;
    }
  }
  if (!(input.elevation_deg >= model_->min_elevation_deg() && input.elevation_deg <= 90.0)) {
    result.status = RetrievalStatus::kOutOfDomain;
    result.message =
        describe_value("elevation_deg", input.elevation_deg) + " is outside the model's domain";
    return result;
  }
  Impl& m = *impl_;
  m.cost.set_input(input);
  // Start: the given PWV, or the best of a coarse logarithmic scan (clear sky, no offsets).
  double start = input.initial_pwv_mm;
  if (!(start >= 0.0 && start <= model_->options().max_pwv_mm)) {
    double best = std::numeric_limits<double>::infinity();
    start = 1.0;
    for (double pwv = 0.05; pwv <= model_->options().max_pwv_mm; pwv *= 2.0) {
      if (model_->evaluate(pwv, input.elevation_deg, m.probe_ws, m.probe_tb) !=
          FastModelStatus::kOk)
        continue;
      double chi2 = 0.0;
      for (std::size_t c = 0; c < nc; ++c) {
        const double r = (m.probe_tb[c] - input.brightness_k[c]) / input.noise_k[c];
        chi2 += r * r;
      }
      if (chi2 < best) {
        best = chi2;
        start = pwv;
      }
    }
  }
  std::fill(m.x.begin(), m.x.end(), 0.0);
  m.x[0] = start;
  if (m.layout.gain >= 0) m.x[static_cast<std::size_t>(m.layout.gain)] = 1.0;
  if (m.layout.liquid >= 0 && options_.liquid_prior_kg_m2) {
    m.x[static_cast<std::size_t>(m.layout.liquid)] = std::clamp(
        options_.liquid_prior_kg_m2->mean, 0.0, model_->options().max_liquid_water_path_kg_m2);
  }
  ceres::Solver::Summary summary;
  ceres::Solve(m.solver_options, m.problem.get(), &summary);
  result.iterations = static_cast<int>(summary.iterations.size());
  switch (summary.termination_type) {
    case ceres::CONVERGENCE:
      result.status = RetrievalStatus::kConverged;
      break;
    case ceres::NO_CONVERGENCE:
      result.status = RetrievalStatus::kNoConvergence;
      result.message = "iteration limit reached";
      break;
    default:
      result.status = RetrievalStatus::kSolverFailure;
      result.message = summary.message;
      return result;
  }
  // Residuals and Jacobian at the solution for chi-square and covariance.
  const int nr = m.cost.num_residuals();
  const int p = m.layout.size;
  std::vector<double> residuals(static_cast<std::size_t>(nr));
  std::vector<double> jacobian(static_cast<std::size_t>(nr * p));
  const double* params[] = {m.x.data()};
  double* jac[] = {jacobian.data()};
  if (!m.cost.Evaluate(params, residuals.data(), jac)) {
    result.status = RetrievalStatus::kSolverFailure;
    result.message =
        std::string("model failed at the solution: ") + to_string(m.cost.last_status());
    return result;
  }
  double chi2_channels = 0.0, chi2_total = 0.0;
  for (int r = 0; r < nr; ++r) {
    const double r2 =
        residuals[static_cast<std::size_t>(r)] * residuals[static_cast<std::size_t>(r)];
    chi2_total += r2;
    if (r < static_cast<int>(nc)) chi2_channels += r2;
  }
  result.chi2 = chi2_channels;
  result.dof = nr - p;
  result.chi2_per_dof = result.dof > 0 ? chi2_total / result.dof : std::nan("");
  result.model_brightness_k = m.cost.model_brightness();
  const Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>> j(
      jacobian.data(), nr, p);
  const Eigen::MatrixXd information = j.transpose() * j;
  const Eigen::MatrixXd covariance = information.ldlt().solve(Eigen::MatrixXd::Identity(p, p));
  result.covariance.resize(static_cast<std::size_t>(p * p));
  for (int a = 0; a < p; ++a) {
    for (int b = 0; b < p; ++b)
      result.covariance[static_cast<std::size_t>(a * p + b)] = covariance(a, b);
  }
  auto sigma = [&](int index) { return std::sqrt(std::max(covariance(index, index), 0.0)); };
  result.parameter_names.push_back("pwv_mm");
  result.pwv_mm = m.x[0];
  result.pwv_sigma_mm = sigma(0);
  if (m.layout.liquid >= 0) {
    result.parameter_names.push_back("liquid_kg_m2");
    result.liquid_kg_m2 = m.x[static_cast<std::size_t>(m.layout.liquid)];
    result.liquid_sigma_kg_m2 = sigma(m.layout.liquid);
  }
  if (m.layout.temperature >= 0) {
    result.parameter_names.push_back("temperature_offset_k");
    result.temperature_offset_k = m.x[static_cast<std::size_t>(m.layout.temperature)];
    result.temperature_offset_sigma_k = sigma(m.layout.temperature);
  }
  if (m.layout.offsets >= 0) {
    for (std::size_t c = 0; c < nc; ++c) {
      result.parameter_names.push_back("channel_offset_k[" + std::to_string(c) + "]");
      result.channel_offsets_k.push_back(m.x[static_cast<std::size_t>(m.layout.offsets) + c]);
    }
  }
  if (m.layout.gain >= 0) {
    result.parameter_names.push_back("gain");
    result.gain = m.x[static_cast<std::size_t>(m.layout.gain)];
  }
  return result;
}

}  // namespace wvr
