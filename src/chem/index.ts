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
export { barriers3, descentLabels3, lowerLinkComponents3, type Barriers3Options, type Barriers3Result, type Minimum3Record, type TransitionState3Record, type Stationary3Record, type Path3Record, type Location3, type MergedPoint3 } from './barriers3.js';
export { GridField3, newSample3, hermite4Weights, type Field3Sample } from './field3.js';
export { refineStationary3, descendOnFit3, eigenSymmetric3, type Refined3, type SymmetricEigen3 } from './refine3.js';
export { minimumEnergyPath3, steepestDescent3, resample3, type Path3, type EndTarget3 } from './mep3.js';
export { barriers3Report, reportFromResult3, path3Rows, type Barriers3Report, type Barriers3Run } from '../report/barriers3.js';
