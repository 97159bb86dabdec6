#pragma once
// Where a density map puts its mass: near true lesions, near look-alikes (round dots, vessel-like
// lines) or elsewhere. A map that counts by finding objects puts most of its mass on lesions and
// little on look-alikes; one that counts by reading a global cue spreads it over the image.
//
// A voxel belongs to the neighbourhood of an object class when it lies within `radius_mm` of a
// voxel the truth labels with that class; where neighbourhoods meet, lesions come first, then
// dots, then lines (so a look-alike touching a lesion never takes the lesion's mass). Per-object
// mass divides a class's mass by how many objects of that class the image holds, so classes with
// different numbers of objects compare fairly.

#include <string>

#include "phantoms/image.h"

namespace frugal::measure {

struct MapMassOptions {
  double radius_mm = 2.0;        // neighbourhood of an object; 0 = its own voxels only
  std::string validate() const;  // empty when valid
};

struct ObjectCounts {
  int lesions = 0;
  int dots = 0;
  int lines = 0;
};

struct MapMass {
  double total = 0.0;  // sum of the map
  double on_lesions = 0.0;
  double on_dots = 0.0;
  double on_lines = 0.0;
  double elsewhere = 0.0;  // further than radius_mm from every object
  ObjectCounts objects;
  // Accumulates another image's masses and object counts (pooling over a test set).
  MapMass& operator+=(const MapMass& other);
  // Mass per object of a class; NaN when there is no object of the class.
  double per_lesion() const;
  double per_dot() const;
  double per_line() const;
  double share_on_lesions() const;  // on_lesions / total; NaN when total is 0
  double share_elsewhere() const;   // elsewhere / total; NaN when total is 0
};

// `map` and `truth_labels` (phantom label codes, subject.h) must have the same shape; negative map
// values are summed as they are (a density map has none). Throws UserError on a shape mismatch.
MapMass map_mass(const FloatImage& map, const LabelImage& truth_labels, const ObjectCounts& objects,
                 const MapMassOptions& options = {});

}  // namespace frugal::measure
