/** The chemistry side of sill: energy landscapes (`barriers`) and their parts. */
export { barriers, MINIMAX_LIMIT, MERGE_TOLERANCE, FAILED_DESCENT_SPACINGS, type MergedPoint, type BarriersOptions, type BarriersResult, type MinimumRecord, type TransitionStateRecord, type BarrierRow, type MinimaxRow, type HierarchyNode, type PathRecord, type BasinInfo, type StationaryRecord } from './barriers.js';
export { CODATA_2018, CODATA_EDITION, GAS_CONSTANT, ENERGY_UNITS, parseEnergyUnit, checkTemperature, joulesPerMole, conversionFactor, kTIn, eyringPrefactor, eyringRate, type EnergyUnit } from './units.js';
export { GridField, MeshField, fieldFor, newSample, type Field, type FieldSample, type MeshFieldOptions } from './field.js';
export { refineStationary, descendOnFit, eigenSymmetric2, type Refined, type RefineKind, type RefineStatus, type SymmetricEigen, type RefineOptions } from './refine.js';
export { minimumEnergyPath, steepestDescent, resample, type MinimumEnergyPath, type PathOptions, type PathPoint, type EndTarget } from './mep.js';
export { pitRepresentatives, descentLabels, lowerLinkComponents, OUTSIDE, NO_LABEL } from './basins.js';
export { applyCap, preparePeriodic, ANGLE_PERIODS } from './prepare.js';
export { noiseFloor, planeResiduals, valueQuantum, NOISE_FACTOR, MAD_SCALE, type NoiseFloor } from './noise.js';
export { groupByPoint, localSpacing, outwardRise, hullInfo, type HullInfo } from './merge.js';
export { layoutDisconnectivity, type DisconnectivityLayout, type GraphNode } from './disconnectivity.js';
export { barriersReport, reportFromResult, type BarriersReport, type BarriersReportOptions, type BarriersRun } from '../report/barriers.js';
export { sampleDensity, framesFromFile, framesInMemory, densityValues, freeEnergyValues, freeEnergyGrid, freeEnergyGrid3, maskedBins, binOf, KDE_CUTOFF, DEFAULT_BLOCKS, type SampleOptions, type SampleDensity, type FrameFeeder } from './samples.js';
export { bootstrapBarriers, matchStates, spread, DEFAULT_RESAMPLES, DEFAULT_SEED, MATCH_RADIUS, INTERVAL_LEVEL, type BootstrapOptions, type BootstrapResult, type Spread } from './bootstrap.js';
export { barriersFromSamples, addSamplesReport, DEFAULT_MIN_COUNT, type BarriersFromSamplesOptions, type BarriersFromSamplesRun } from '../report/samples.js';
