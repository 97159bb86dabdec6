// A user's TorchScript module as the network of a map strategy (network_internal.h). The module
// must map a float32 batch [N, 1, spatial...] to raw logits of the same shape; frugal trains all
// of its parameters and saves it back as TorchScript with frugal's metadata as an extra file.
#include <torch/script.h>

#include <exception>
#include <filesystem>
#include <memory>
#include <sstream>
#include <string>
#include <unordered_map>
#include <unordered_set>
#include <utility>
#include <vector>

#include "experiments/learn/network_internal.h"
#include "phantoms/user_error.h"

namespace frugal::learn::internal {
namespace {

constexpr const char* kHowToExport =
    "export one with torch.jit.script(model).save(path) or torch.jit.trace(model, example).save(path) "
    "(see docs/own-network.md)";

std::string sizes_text(c10::IntArrayRef sizes) {
  std::ostringstream text;
  text << "[";
  for (std::size_t i = 0; i < sizes.size(); ++i) text << (i > 0 ? ", " : "") << sizes[i];
  text << "]";
  return text.str();
}

// The last non-empty line of an interpreter error: the error itself, without the TorchScript
// traceback above it (the module's author can see that by running the module in Python).
std::string last_line(const std::string& message) {
  const std::size_t end = message.find_last_not_of(" \n\r\t");
  if (end == std::string::npos) return message;
  const std::size_t newline = message.rfind('\n', end);
  const std::size_t start = newline == std::string::npos ? 0 : newline + 1;
  return message.substr(start, end + 1 - start);
}

// What a module returned, in words, when it is not one tensor.
std::string describe(const c10::IValue& value) {
  if (value.isTuple()) return "a tuple of " + std::to_string(value.toTupleRef().elements().size()) + " values";
  if (value.isGenericDict()) return "a dict";
  if (value.isList()) return "a list";
  if (value.isNone()) return "None";
  return std::string("a value of kind ") + value.tagKind();
}

class ScriptedNetwork : public Network {
 public:
  ScriptedNetwork(const torch::jit::Module& module, std::string path) : module_(module), path_(std::move(path)) {}

  NetworkOutput forward(const torch::Tensor& input) override {
    c10::IValue output;
    try {
      output = module_.forward({input});
    } catch (const c10::Error& error) {
      throw UserError(failure(input, error.what_without_backtrace()));
    } catch (const std::exception& error) {  // exceptions raised by the module's own code
      throw UserError(failure(input, error.what()));
    }
    return {map_of(output, input), torch::Tensor()};
  }

  std::vector<torch::Tensor> parameters() override {
    // A parameter shared by two submodules is listed once, so the optimiser steps it once.
    std::unordered_set<const void*> seen;
    std::vector<torch::Tensor> unique;
    for (const torch::Tensor& parameter : module_.parameters(/*recurse=*/true))
      if (seen.insert(parameter.unsafeGetTensorImpl()).second) unique.push_back(parameter);
    return unique;
  }

  NamedTensors state() override {
    torch::NoGradGuard no_grad;
    NamedTensors state;
    for (const auto& parameter : module_.named_parameters(/*recurse=*/true))
      state.emplace_back(parameter.name, parameter.value.detach().clone());
    for (const auto& buffer : module_.named_buffers(/*recurse=*/true))
      state.emplace_back(buffer.name, buffer.value.detach().clone());
    return state;
  }

  void restore(const NamedTensors& state) override {
    std::unordered_map<std::string, const torch::Tensor*> by_name;
    for (const auto& [name, tensor] : state) by_name.emplace(name, &tensor);
    torch::NoGradGuard no_grad;
    std::size_t restored = 0;
    const auto restore_one = [&](const std::string& name, const torch::Tensor& target) {
      const auto found = by_name.find(name);
      FRUGAL_CHECK(found != by_name.end());
      FRUGAL_CHECK(found->second->sizes() == target.sizes());
      target.copy_(*found->second);
      ++restored;
    };
    for (const auto& parameter : module_.named_parameters(/*recurse=*/true))
      restore_one(parameter.name, parameter.value);
    for (const auto& buffer : module_.named_buffers(/*recurse=*/true)) restore_one(buffer.name, buffer.value);
    FRUGAL_CHECK(restored == state.size());
  }

  void set_training(bool training) override { module_.train(training); }
  bool has_scalar_head() const override { return false; }
  bool set_map_bias(double /*value*/) override { return false; }

  // Write errors stay c10::Error: the caller removes its partial file and names the final path.
  void save(std::ostream& out, const std::string& meta_json) override {
    module_.save(out, torch::jit::ExtraFilesMap{{kScriptedMetaFile, meta_json}});
  }

  // The module's output for `input`, checked: one floating tensor of the input's shape, as float32.
  torch::Tensor map_of(const c10::IValue& output, const torch::Tensor& input) const {
    if (!output.isTensor())
      throw UserError(path_ + ": the TorchScript module returned " + describe(output) + " for an input of shape " +
                      sizes_text(input.sizes()) +
                      "; frugal needs one tensor of the input's shape (the raw map, before any sigmoid)");
    const torch::Tensor& map = output.toTensor();
    if (map.sizes() != input.sizes())
      throw UserError(path_ + ": the TorchScript module maps an input of shape " + sizes_text(input.sizes()) +
                      " to an output of shape " + sizes_text(map.sizes()) +
                      "; frugal needs an output of exactly the input's shape [N, 1, spatial...]");
    if (!map.is_floating_point())
      throw UserError(path_ + ": the TorchScript module returned a tensor of type " +
                      std::string(c10::toString(map.scalar_type())) + "; frugal needs a float32 map");
    return map.scalar_type() == torch::kFloat32 ? map : map.to(torch::kFloat32);
  }

  std::string failure(const torch::Tensor& input, const std::string& what) const {
    return path_ + ": the TorchScript module failed on an input of shape " + sizes_text(input.sizes()) +
           " (float32 images [N, 1, " + (input.dim() == 4 ? "H, W" : "D, H, W") + "]): " + last_line(what);
  }

 private:
  torch::jit::Module module_;
  std::string path_;
};

// Floating-point parameters and buffers to float32; integer buffers (a batch norm's counter) stay.
void to_float32(torch::jit::Module& module) {
  torch::NoGradGuard no_grad;
  for (torch::Tensor parameter : module.parameters(/*recurse=*/true))
    if (parameter.is_floating_point() && parameter.scalar_type() != torch::kFloat32)
      parameter.set_data(parameter.to(torch::kFloat32));
  for (torch::Tensor buffer : module.buffers(/*recurse=*/true))
    if (buffer.is_floating_point() && buffer.scalar_type() != torch::kFloat32)
      buffer.set_data(buffer.to(torch::kFloat32));
}

}  // namespace

std::unique_ptr<Network> load_scripted_network(const std::string& path, const Shape& shape, const std::string* bytes) {
  std::error_code error_code;
  if (!bytes && !std::filesystem::is_regular_file(path, error_code))
    throw UserError(path + ": no such file; network_file names a TorchScript module: " + kHowToExport);
  torch::jit::Module module;
  try {
    if (bytes) {
      std::istringstream stream(*bytes, std::ios::binary);
      module = torch::jit::load(stream, torch::Device(torch::kCPU));
    } else {
      module = torch::jit::load(path, torch::Device(torch::kCPU));
    }
  } catch (const c10::Error& error) {
    throw UserError(path + ": not a TorchScript file (" + error.what_without_backtrace() + "): " + kHowToExport);
  } catch (const std::exception& error) {  // a readable archive whose code does not compile
    throw UserError(path + ": not a TorchScript file frugal can load (" + error.what() + "): " + kHowToExport);
  }
  if (module.find_method("forward") == c10::nullopt)
    throw UserError(path + ": the TorchScript module has no forward method: " + kHowToExport);
  to_float32(module);

  // Every parameter is trained, including any the author froze before export.
  std::size_t parameter_count = 0;
  for (torch::Tensor parameter : module.parameters(/*recurse=*/true)) {
    parameter.requires_grad_(true);
    ++parameter_count;
  }
  if (parameter_count == 0)
    throw UserError(path + ": the TorchScript module has no parameters, so there is nothing to train");

  auto network = std::make_unique<ScriptedNetwork>(module, path);
  // Probe on a zero batch of two images, in eval mode so that batch statistics stay untouched.
  std::vector<std::int64_t> sizes{2, 1, shape.y, shape.x};
  if (shape.dims() == 3) sizes = {2, 1, shape.z, shape.y, shape.x};
  const torch::Tensor probe = torch::zeros(sizes, torch::kFloat32);
  network->set_training(false);
  {
    torch::NoGradGuard no_grad;
    network->forward(probe);
  }
  return network;
}

}  // namespace frugal::learn::internal
