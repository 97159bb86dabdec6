// Checkpoints: a trained model written whole or not at all, and read back exactly. The network's
// tensors go where its kind keeps them (a torch archive for frugal's U-net, the module itself for
// a TorchScript network); everything else is one JSON record, "frugal.meta".
#include <openssl/sha.h>
#include <torch/script.h>
#include <torch/torch.h>

#include <cmath>
#include <exception>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <limits>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <unordered_map>
#include <utility>

#include "experiments/learn/learner.h"
#include "experiments/learn/model_internal.h"
#include "experiments/learn/train_options_json.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::learn {
namespace {

using nlohmann::json;

constexpr int kCheckpointVersion = 4;  // 3: the SHA-256 trailer; 4: the options as train_options_json

// The options go through their one JSON form (train_options_json.h); the rest is what training
// learned of the data.
json describe(const TrainedModel::Impl& model) {
  return json{
      {"version", kCheckpointVersion},
      {"train", to_json(model.options)},
      {"label_kind", frugal::to_string(model.kind)},
      {"shape", {model.shape.x, model.shape.y, model.shape.z}},
      {"voxel_volume_mm3", model.voxel_volume_mm3},
      {"input_mean", model.input_mean},
      {"input_scale", model.input_scale},
      {"target_mean", model.target_mean},
      {"target_scale", model.target_scale},
  };
}

void read_description(const json& meta, TrainedModel::Impl& model) {
  update_from_json(meta.at("train"), model.options, "frugal.meta.train");
  if (const std::string problem = model.options.validate(); !problem.empty())
    throw UserError("frugal.meta.train." + problem);
  model.kind = label_kind_from_string(meta.at("label_kind").get<std::string>());
  const auto shape = meta.at("shape").get<std::vector<int>>();
  if (shape.size() != 3) throw UserError("frugal.meta: shape must have 3 entries");
  model.shape = Shape{shape[0], shape[1], shape[2]};
  model.voxel_volume_mm3 = meta.at("voxel_volume_mm3").get<double>();
  model.input_mean = meta.at("input_mean").get<double>();
  model.input_scale = meta.at("input_scale").get<double>();
  model.target_mean = meta.at("target_mean").get<double>();
  model.target_scale = meta.at("target_scale").get<double>();
  if (model.shape.x < 1 || model.shape.y < 1 || model.shape.z < 1 || !(model.input_scale > 0.0))
    throw UserError("frugal.meta holds an impossible image size or input scale");
}

// The metadata of a TorchScript network's checkpoint (its extra file), or "" for other files.
std::string scripted_meta(const std::string& bytes) {
  torch::jit::ExtraFilesMap extra{{internal::kScriptedMetaFile, ""}};
  std::istringstream stream(bytes, std::ios::binary);
  torch::jit::load(stream, c10::nullopt, extra);
  return extra[internal::kScriptedMetaFile];
}

// A checkpoint ends with a trailer: kTrailerMagic and the SHA-256 (FIPS 180-4) of every byte
// before it, in hex. libtorch's own readers crash on some damaged archives (fuzz/checkpoint_fuzz),
// so a copy cut short or altered is refused here before any of its bytes reach them.
constexpr char kTrailerMagic[] = "\nfrugal-checkpoint-sha256:";
constexpr std::size_t kTrailerSize = sizeof kTrailerMagic - 1 + 64;

std::string sha256_hex(const std::string& bytes) {
  unsigned char digest[SHA256_DIGEST_LENGTH];
  SHA256(reinterpret_cast<const unsigned char*>(bytes.data()), bytes.size(), digest);
  static const char* hex = "0123456789abcdef";
  std::string text;
  for (unsigned char byte : digest) {
    text += hex[byte >> 4];
    text += hex[byte & 15];
  }
  return text;
}

// The checkpoint's archive bytes, once its trailer vouches for them.
std::string read_verified_checkpoint(const std::string& path) {
  require_regular_file(path, "a frugal checkpoint (frugal train --out)");
  std::ifstream stream(path, std::ios::binary);
  std::string bytes((std::istreambuf_iterator<char>(stream)), std::istreambuf_iterator<char>());
  if (!stream.good() && !stream.eof()) throw UserError(path + ": cannot read the checkpoint");
  const std::string magic(kTrailerMagic, sizeof kTrailerMagic - 1);
  if (bytes.size() < kTrailerSize || bytes.compare(bytes.size() - kTrailerSize, magic.size(), magic) != 0)
    throw UserError(path +
                    ": not a frugal checkpoint of this version, or cut short (no check sum at its end); "
                    "allowed: a file frugal train wrote (train the model again)");
  const std::string stored = bytes.substr(bytes.size() - 64);
  bytes.resize(bytes.size() - kTrailerSize);
  if (sha256_hex(bytes) != stored)
    throw UserError(path +
                    ": the checkpoint is damaged (its SHA-256 check sum does not match its content: an "
                    "altered or badly copied file); allowed: the file as frugal train wrote it");
  return bytes;
}

}  // namespace

TrainedModel::TrainedModel() = default;
TrainedModel::TrainedModel(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
TrainedModel::TrainedModel(TrainedModel&&) noexcept = default;
TrainedModel& TrainedModel::operator=(TrainedModel&&) noexcept = default;
TrainedModel::~TrainedModel() = default;

const TrainedModel::Impl& TrainedModel::impl() const {
  if (!impl_) throw UserError("the model is empty: train or load one first");
  return *impl_;
}
Strategy TrainedModel::strategy() const { return impl().options.strategy; }
const TrainOptions& TrainedModel::options() const { return impl().options; }

void TrainedModel::save(const std::string& path) const {
  const Impl& model = impl();
  const std::string meta = describe(model).dump();
  // Serialised in memory (a checkpoint is megabytes), then written through WholeFile, which checks
  // every byte reached the disk and removes its temporary file otherwise.
  std::ostringstream bytes(std::ios::binary);
  try {
    if (model.network) {
      model.network->save(bytes, meta);
    } else {
      internal::save_archive(bytes, meta, nullptr);
    }
  } catch (const c10::Error& error) {
    throw UserError(path + ": cannot serialise the checkpoint: " + error.what_without_backtrace());
  }
  const std::string archive = bytes.str();
  WholeFile file(path);
  file.write(archive);
  file.write(kTrailerMagic);
  file.write(sha256_hex(archive));
  file.commit();
}

TrainedModel TrainedModel::load(const std::string& path) {
  if (!std::filesystem::exists(path)) throw UserError(path + ": no such checkpoint file");
  const std::string bytes = read_verified_checkpoint(path);
  auto model = std::make_unique<Impl>();
  try {
    const std::string scripted = scripted_meta(bytes);
    torch::serialize::InputArchive archive;
    json meta;
    if (!scripted.empty()) {
      meta = json::parse(scripted);
    } else {
      archive.load_from(bytes.data(), bytes.size());
      torch::Tensor text;
      if (!archive.try_read("frugal.meta", text) || text.dim() != 1 || text.scalar_type() != torch::kUInt8)
        throw UserError(path + ": not a frugal checkpoint (no frugal.meta record)");
      text = text.contiguous();
      meta = json::parse(std::string(reinterpret_cast<const char*>(text.data_ptr<std::uint8_t>()),
                                     static_cast<std::size_t>(text.numel())));
    }
    if (meta.value("version", 0) != kCheckpointVersion)
      throw UserError(path + ": checkpoint layout " + meta.value("version", json(0)).dump() + " is not the layout " +
                      std::to_string(kCheckpointVersion) + " this frugal reads; train the model again");
    read_description(meta, *model);
    if (!scripted.empty())
      model->network = internal::load_scripted_network(path, model->shape, &bytes);
    else if (!is_classical(model->options.strategy))
      model->network =
          internal::load_unet_network(archive, model->shape.dims(), model->options.width, model->options.depth,
                                      model->options.normalization, model->options.channels_last);
    if (model->network) model->network->set_training(false);
  } catch (const c10::Error& error) {
    throw UserError(path + ": cannot read the checkpoint (truncated or not a frugal checkpoint): " +
                    error.what_without_backtrace());
  } catch (const json::exception& error) {
    throw UserError(path + ": the checkpoint's frugal.meta record is damaged: " + error.what());
  } catch (const UserError&) {
    throw;
  } catch (const std::exception& error) {
    // torch's unpickler throws plain standard exceptions (std::out_of_range) on some damaged
    // archives (found by fuzz/checkpoint_fuzz; corpus/checkpoint_fuzz/damaged-pickle.pt).
    throw UserError(path + ": cannot read the checkpoint (damaged or not a frugal checkpoint): " + error.what());
  }
  return TrainedModel(std::move(model));
}

}  // namespace frugal::learn
