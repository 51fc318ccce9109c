/**
 * sill as a library: `import { readSurface, ponds } from 'sill'`. The public API and nothing
 * else; docs/library.md has worked examples of each part.
 */

// surfaces: read a file, or wrap values held in memory
export { readSurface, gridFromArray, surfaceName, type Surface, type ReadSurfaceOptions, type GridFromArrayOptions } from './api/surface.js';
export { Grid, type GridInit, type GridValues, type GeoTransform, type Crs } from './surface/grid.js';
export { Mesh } from './surface/mesh.js';
export type { Connectivity, Boundary } from './surface/complex.js';
// 3-D grids (docs/grids3d.md): the grid, its complex, and the survey as typed columns
export { Grid3, type Grid3Init } from './surface/grid3.js';
export { readGrid3, isGrid3File, type Grid3ReadOptions } from './io/grid3-read.js';
export { survey3Report, locate3, type Survey3Report, type Survey3Run, type Location3, type CriticalPoint3Record, type Pair3Record } from './report/survey3.js';
export { Complex3, type Complex3Options, type Connectivity3, type Boundary3, type SimplexCounts3 } from './surface/complex3.js';
export {
  criticalPoints3, MINIMUM, SADDLE1, SADDLE2, MAXIMUM, KIND3_NAMES,
  type Survey3Options, type Survey3Result, type CriticalPoints3, type PersistencePairs3, type Euler3, type CriticalKind3,
} from './morse/survey3.js';

// mosaics: a GDAL VRT, a folder of GeoTIFF tiles or several GeoTIFF paths as one surface (docs/tiles.md)
export { openMosaic, isMosaicInput, type OpenedMosaic, type MosaicOptions, type MosaicKind } from './io/mosaic.js';
export type { Mosaic, MosaicTile, CellWindow } from './tiles/mosaic.js';
// the tile-by-tile depression method over any Mosaic: the single-grid answer in bounded memory (docs/tiles.md, Method)
export { pondsTiled, type TiledPondsOptions, type TiledPondsResult } from './tiles/ponds.js';
export { pondsStaged, StageFailed, type MosaicSource, type StagedOptions } from './tiles/stages.js';
export { LocalEngine, type Engine } from './cluster/engine.js';
export { SlurmEngine, type SlurmOptions } from './cluster/slurm.js';
export { gridMosaic, type TileCut } from './tiles/memory.js';
export { vrtText, type VrtLayer, type VrtSource } from './io/vrt-write.js';

// the analyses: analysis(surface, options) → { report, result }
export {
  survey, ponds, runoff, barriers, survey3, type Survey3ApiOptions,
  type CommonOptions, type SurveyOptions, type HydroOptions, type PondsOptions, type RunoffOptions, type BarriersOptions,
} from './api/analyses.js';

// the report objects (the JSON of each command) and their builders
export { SILL_VERSION as version, type SurfaceInfo, type EulerInfo, type Location } from './report/common.js';
export { surveyReport, PairRows, type SurveyRun, type SurveyReport, type CriticalPointRecord, type PairRecord, type TreeNodeRecord } from './report/survey.js';
export { pondsReport, buildPondsReport, type PondsRun, type PondsReport, type DepressionRecord } from './report/ponds.js';
export { runoffReport, buildRunoffReport, type RunoffRun, type RunoffReport, type RunoffDepressionRecord, type PondRecord, type WaterState } from './report/runoff.js';
export {
  barriersReport, reportFromResult as buildBarriersReport,
  type BarriersRun, type BarriersReport, type MinimumEntry, type TransitionStateEntry, type BarrierEntry, type PathEntry, type StationaryEntry, type PointXYE,
} from './report/barriers.js';
// barriers on a 3-D grid (Grid3): the analysis, and its report object (the 2-D keys plus z)
export {
  barriers3Report, reportFromResult3 as buildBarriers3Report,
  type Barriers3Run, type Barriers3Report, type Barriers3ReportOptions, type Minimum3Entry, type TransitionState3Entry, type Stationary3Entry, type Path3Entry, type PointXYZE,
} from './report/barriers3.js';
// free energies from sampled frames (histogram or kernel density) and their block bootstrap (docs/barriers.md)
export { barriersFromSamples, type BarriersFromSamplesOptions, type BarriersFromSamplesRun } from './report/samples.js';
export type { SamplesEntry, SampleUncertainty, SpreadEntry } from './report/barriers.js';
export { sampleDensity, framesFromFile, framesInMemory, densityValues, freeEnergyValues, freeEnergyGrid, freeEnergyGrid3, type SampleOptions, type SampleDensity, type FrameFeeder } from './chem/samples.js';
export { bootstrapBarriers, type BootstrapOptions, type BootstrapResult } from './chem/bootstrap.js';
export { DepressionRows, type DepressionCore, type DepressionColumns, type CellRef, type PourRecord } from './report/hydro-common.js';
export { Rows } from './io/stream.js';

// the typed results behind the reports
export type { SurveyResult, PersistencePairs } from './morse/survey.js';
export type { MergeTree } from './morse/mergetree.js';
export type { PondsResult } from './hydro/ponds.js';
export type { Hierarchy } from './hydro/hierarchy.js';
export type { PondRasters } from './hydro/rasters.js';
export type { RunoffResult, RunoffWater, WaterBodies } from './hydro/runoff.js';
export type { BarriersResult, MinimumRecord, TransitionStateRecord, BarrierRow, PathRecord } from './chem/barriers.js';
export { barriers3, type Barriers3Options, type Barriers3Result, type Minimum3Record, type TransitionState3Record, type Path3Record } from './chem/barriers3.js';
export { ENERGY_UNITS, conversionFactor, type EnergyUnit } from './chem/units.js';

// writers
export { writeGeoTiff, type RasterToWrite, type RasterValues, type GeoTiffWriteOptions } from './io/geotiff-write.js';
export { writeJsonFile, writeCsvFile, writePointsGeoJson, writeDepressionsCsv, writeDepressionsGeoJson, writePourPointsGeoJson, pondsRasters, runoffRasters, type PointsGeoJsonOptions } from './api/write.js';
export { TextSink, writeJson } from './io/stream.js';

// errors
export { InputError, SelfCheckError } from './errors.js';
