#include "phantoms/truth_tables.h"

#include <cstdio>

#include "frugal_version.h"

namespace frugal {

namespace {

std::string number(double value) {
  char text[32];
  std::snprintf(text, sizeof(text), "%.9g", value);
  return text;
}

}  // namespace

std::string csv_version_comment(const std::string& table) {
  return "# frugal " + std::string(kVersion) + ", " + table + ", schema " + std::to_string(kOutputSchemaVersion) + "\n";
}

std::string truth_csv_header() {
  return "subject,rescan,family,pattern,target,count,count_reference_slice,reference_slice,burden_mm3,affected_fraction,"
         "densitometry,confounder,field_volume_mm3,objects_dropped,image,labels\n";
}

std::string truth_csv_row(const SubjectTruth& t, const std::string& image_file, const std::string& labels_file) {
  return std::to_string(t.subject) + "," + std::to_string(t.rescan) + "," + to_string(t.family) + "," + t.pattern + "," +
         number(t.target) + "," + std::to_string(t.count) + "," + std::to_string(t.count_reference_slice) + "," + std::to_string(t.reference_slice) +
         "," + number(t.burden_mm3) + "," + number(t.affected_fraction) + "," +
         (t.family == Family::voids ? number(t.densitometry) : std::string("NA")) + "," + number(t.confounder) + "," +
         number(t.field_volume_mm3) + "," + std::to_string(t.objects_dropped) + "," + image_file + "," + labels_file + "\n";
}

std::string objects_csv_header() {
  return "subject,rescan,object,kind,centre_x_mm,centre_y_mm,centre_z_mm,direction_x,direction_y,direction_z,"
         "length_mm,width_mm,contrast,volume_mm3,mask_volume_mm3,in_reference_slice\n";
}

std::string objects_csv_rows(const SubjectTruth& t) {
  std::string rows;
  for (const ObjectRecord& o : t.objects) {
    rows += std::to_string(t.subject) + "," + std::to_string(t.rescan) + "," + std::to_string(o.id) + "," +
            to_string(o.kind) + "," + number(o.centre_mm[0]) + "," + number(o.centre_mm[1]) + "," + number(o.centre_mm[2]) +
            "," + number(o.direction[0]) + "," + number(o.direction[1]) + "," + number(o.direction[2]) + "," +
            number(o.length_mm) + "," + number(o.width_mm) + "," + number(o.contrast) + "," + number(o.volume_mm3) + "," +
            number(o.mask_volume_mm3) + "," + (o.in_reference_slice ? "1" : "0") + "\n";
  }
  return rows;
}

}  // namespace frugal
