#include "phantoms/truth_tables.h"

#include <cstdio>

#include "frugal_version.h"
#include "phantoms/text_format.h"

namespace frugal {

std::string csv_version_comment(const std::string& table) {
  return "# frugal " + std::string(kVersion) + ", " + table + ", schema " + std::to_string(kOutputSchemaVersion) + "\n";
}

std::string truth_csv_header() {
  return "subject,rescan,family,pattern,target,count,count_reference_slice,reference_slice,burden_mm3,affected_fraction,"
         "densitometry,confounder,field_volume_mm3,objects_dropped,tree_volume_mm3,tree_air_volume_mm3,image,labels\n";
}

std::string truth_csv_row(const SubjectTruth& t, const std::string& image_file, const std::string& labels_file) {
  const bool voids = t.family == Family::voids;
  const auto voids_only = [&](double value) { return voids ? exact_decimal(value) : std::string("NA"); };
  return std::to_string(t.subject) + "," + std::to_string(t.rescan) + "," + to_string(t.family) + "," + t.pattern + "," +
         exact_decimal(t.target) + "," + std::to_string(t.count) + "," + std::to_string(t.count_reference_slice) + "," + std::to_string(t.reference_slice) +
         "," + exact_decimal(t.burden_mm3) + "," + exact_decimal(t.affected_fraction) + "," +
         voids_only(t.densitometry) + "," + exact_decimal(t.confounder) + "," + exact_decimal(t.field_volume_mm3) + "," +
         std::to_string(t.objects_dropped) + "," + voids_only(t.tree_volume_mm3) + "," + voids_only(t.tree_air_volume_mm3) +
         "," + image_file + "," + labels_file + "\n";
}

std::string objects_csv_header() {
  return "subject,rescan,object,kind,centre_x_mm,centre_y_mm,centre_z_mm,direction_x,direction_y,direction_z,"
         "length_mm,width_mm,contrast,volume_mm3,mask_volume_mm3,in_reference_slice\n";
}

std::string objects_csv_rows(const SubjectTruth& t) {
  std::string rows;
  for (const ObjectRecord& o : t.objects) {
    rows += std::to_string(t.subject) + "," + std::to_string(t.rescan) + "," + std::to_string(o.id) + "," +
            to_string(o.kind) + "," + exact_decimal(o.centre_mm[0]) + "," + exact_decimal(o.centre_mm[1]) + "," + exact_decimal(o.centre_mm[2]) +
            "," + exact_decimal(o.direction[0]) + "," + exact_decimal(o.direction[1]) + "," + exact_decimal(o.direction[2]) + "," +
            exact_decimal(o.length_mm) + "," + exact_decimal(o.width_mm) + "," + exact_decimal(o.contrast) + "," + exact_decimal(o.volume_mm3) + "," +
            exact_decimal(o.mask_volume_mm3) + "," + (o.in_reference_slice ? "1" : "0") + "\n";
  }
  return rows;
}

}  // namespace frugal
