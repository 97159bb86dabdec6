#pragma once
// Convolution work of one image through frugal's U-net (experiments/learn/unet.cpp), for the
// achieved-GFLOP/s figures of learner_benchmark. Torch-free and constexpr so that a hand-worked
// case is checked at compile time; learner_benchmark also checks the weight count against the
// real network, which catches this mirror going out of date with unet.cpp.

#include <cstdint>

namespace frugal::learn::benchmarking {

struct ConvolutionWork {
  std::int64_t forward_flops = 0;  // 2 x C_in x C_out x k^dims x output voxels, summed over convolutions
  std::int64_t weights = 0;        // C_in x C_out x k^dims, summed: the network's convolution weights
};

// Mirrors unet.cpp: level l has width << l channels and voxels / 2^(dims l) voxels (sides divide
// by 2^(depth - 1)); two 3x3(x3) convolutions per level going down (the first from the level
// above, or from the input), two per level going up (the first from the upsampled level below
// concatenated with the skip), then the 1x1 map head. Biases, norms, activations, pooling,
// upsampling and the scalar head are left out: together they are well under 1% of the work.
constexpr ConvolutionWork unet_convolution_work(int dims, int in_channels, int map_channels, int width, int depth,
                                                std::int64_t voxels) {
  const std::int64_t kernel = dims == 2 ? 9 : 27;
  ConvolutionWork work;
  const auto add = [&work](std::int64_t from, std::int64_t to, std::int64_t taps, std::int64_t output_voxels) {
    work.weights += from * to * taps;
    work.forward_flops += 2 * from * to * taps * output_voxels;
  };
  const auto channels = [width](int level) { return static_cast<std::int64_t>(width) << level; };
  const auto level_voxels = [voxels, dims](int level) { return voxels >> (dims * level); };
  for (int level = 0; level < depth; ++level) {
    add(level == 0 ? in_channels : channels(level - 1), channels(level), kernel, level_voxels(level));
    add(channels(level), channels(level), kernel, level_voxels(level));
  }
  for (int level = 0; level + 1 < depth; ++level) {
    add(channels(level + 1) + channels(level), channels(level), kernel, level_voxels(level));
    add(channels(level), channels(level), kernel, level_voxels(level));
  }
  add(channels(0), map_channels, 1, voxels);
  return work;
}

// Worked by hand: 2D, width 1, depth 2, one 4x4 image (16 voxels, 4 at level 1), channels 1 and 2.
//   down 0: 1->1 and 1->1 at 16 voxels: 2*1*1*9*16 = 288 each          weights 9 + 9
//   down 1: 1->2 and 2->2 at 4 voxels:  2*1*2*9*4 = 144, 2*2*2*9*4 = 288   weights 18 + 36
//   up 0:   (2+1)->1 and 1->1 at 16:    2*3*1*9*16 = 864, 288              weights 27 + 9
//   head:   1->1, 1x1, at 16:           2*1*1*1*16 = 32                    weight 1
//   total 288+288+144+288+864+288+32 = 2192 FLOPs, 109 weights.
static_assert(unet_convolution_work(2, 1, 1, 1, 2, 16).forward_flops == 2192);
static_assert(unet_convolution_work(2, 1, 1, 1, 2, 16).weights == 109);
// The same in 3D on a 4x4x4 image (64 voxels, 8 at level 1), 27 taps per kernel:
//   3456 + 3456 + 864 + 1728 + 10368 + 3456 + 128 = 23456 FLOPs; 27+27+54+108+81+27+1 = 325 weights.
static_assert(unet_convolution_work(3, 1, 1, 1, 2, 64).forward_flops == 23456);
static_assert(unet_convolution_work(3, 1, 1, 1, 2, 64).weights == 325);

}  // namespace frugal::learn::benchmarking
