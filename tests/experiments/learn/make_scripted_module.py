#!/usr/bin/python3
"""TorchScript modules for scripted_network_test, written with Debian's python3-torch, and the
Python side of its round trip.

  make_scripted_module.py make <kind> <out.pt>
      kinds: conv2d (torch.jit.script, batch norm), traced2d (torch.jit.trace), conv3d,
             wrong-shape (halves the image), tuple (returns two tensors), no-parameters,
             state-dict (torch.save of weights: not TorchScript)
  make_scripted_module.py check <checkpoint.pt> <input.f32> <map.f32> <height> <width> <tolerance>
      loads a checkpoint frugal wrote with plain torch.jit.load, feeds it the raw image normalised
      with the checkpoint's frugal_meta.json and compares sigmoid(output) with frugal's map.

Exit codes: 0 done, 1 the maps differ, 2 bad arguments, 3 python3-torch is missing.
"""

import json
import sys

try:
    import torch
except ImportError as error:
    sys.stderr.write(f"python3-torch is missing ({error}): install it with scripts/setup.sh\n")
    sys.exit(3)

try:
    import numpy
except ImportError as error:
    sys.stderr.write(f"python3-numpy is missing ({error}): install it with scripts/setup.sh\n")
    sys.exit(3)


class SmallNet2d(torch.nn.Module):
    """Two 3x3 convolutions with batch norm, then a 1x1 map head: image in, logits out."""

    def __init__(self):
        super().__init__()
        self.features = torch.nn.Sequential(
            torch.nn.Conv2d(1, 8, 3, padding=1, bias=False),
            torch.nn.BatchNorm2d(8),
            torch.nn.ReLU(),
            torch.nn.Conv2d(8, 8, 3, padding=1),
            torch.nn.ReLU(),
        )
        self.head = torch.nn.Conv2d(8, 1, 1)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.head(self.features(x))


class SmallNet3d(torch.nn.Module):
    def __init__(self):
        super().__init__()
        self.body = torch.nn.Sequential(
            torch.nn.Conv3d(1, 4, 3, padding=1), torch.nn.ReLU(), torch.nn.Conv3d(4, 1, 1))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.body(x)


class HalvesTheImage(torch.nn.Module):
    def __init__(self):
        super().__init__()
        self.conv = torch.nn.Conv2d(1, 1, 3, padding=1, stride=2)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.conv(x)


class ReturnsATuple(torch.nn.Module):
    def __init__(self):
        super().__init__()
        self.conv = torch.nn.Conv2d(1, 1, 3, padding=1)

    def forward(self, x: torch.Tensor):
        y = self.conv(x)
        return y, y.mean()


class NoParameters(torch.nn.Module):
    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return x * 2.0


def make(kind, out):
    torch.manual_seed(7)
    if kind == "conv2d":
        module = torch.jit.script(SmallNet2d())
    elif kind == "traced2d":
        module = torch.jit.trace(SmallNet2d().eval(), torch.zeros(2, 1, 32, 32))
    elif kind == "conv3d":
        module = torch.jit.script(SmallNet3d())
    elif kind == "wrong-shape":
        module = torch.jit.script(HalvesTheImage())
    elif kind == "tuple":
        module = torch.jit.script(ReturnsATuple())
    elif kind == "no-parameters":
        module = torch.jit.script(NoParameters())
    elif kind == "state-dict":
        torch.save(SmallNet2d().state_dict(), out)
        return
    else:
        sys.stderr.write(f"unknown kind {kind}\n")
        sys.exit(2)
    module.save(out)


def check(checkpoint, input_path, map_path, height, width, tolerance):
    extra_files = {"frugal_meta.json": ""}
    module = torch.jit.load(checkpoint, _extra_files=extra_files)
    meta = json.loads(extra_files["frugal_meta.json"])
    module.eval()
    # frugal writes voxels x fastest: rows are y, columns x.
    image = numpy.fromfile(input_path, dtype=numpy.float32).reshape(height, width)
    expected = numpy.fromfile(map_path, dtype=numpy.float32).reshape(height, width)
    normalised = (image.astype(numpy.float64) - meta["input_mean"]) / meta["input_scale"]
    with torch.no_grad():
        logits = module(torch.from_numpy(normalised.astype(numpy.float32))[None, None])
    probability = torch.sigmoid(logits)[0, 0].numpy()
    difference = float(numpy.abs(probability - expected).max())
    print(f"input_mean {meta['input_mean']}, input_scale {meta['input_scale']}, "
          f"largest difference {difference:.3g} (tolerance {tolerance:g})")
    sys.exit(0 if difference <= tolerance else 1)


def main(argv):
    if len(argv) == 4 and argv[1] == "make":
        make(argv[2], argv[3])
    elif len(argv) == 8 and argv[1] == "check":
        check(argv[2], argv[3], argv[4], int(argv[5]), int(argv[6]), float(argv[7]))
    else:
        sys.stderr.write(__doc__)
        sys.exit(2)


if __name__ == "__main__":
    main(sys.argv)
