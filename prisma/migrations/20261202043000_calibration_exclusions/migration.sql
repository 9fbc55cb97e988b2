-- Lab results of a load with an assignable cause (a MAJOR/CRITICAL process-window deviation) are judged but left
-- out of the product's running calibration: why, per comparison; how many, per calibration.
ALTER TABLE "LabComparison" ADD COLUMN "excludedBy" JSONB;
ALTER TABLE "ProductCalibration" ADD COLUMN "excludedResults" INTEGER NOT NULL DEFAULT 0;
ALTER TABLE "ProductCalibration" ADD COLUMN "exclusions" JSONB;
