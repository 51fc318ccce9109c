/** Ponding analysis: depression hierarchy, spill levels, pour points, volumes, filled/depth/label rasters. */
export { ponds, type PondsOptions, type PondsResult } from './ponds.js';
export { checkPondsInput, type PondsEuler } from './common.js';
export { cellAreas, ellipsoidalCellArea, zoneArea, XY_UNITS, Z_UNITS, type CellAreas, type PondsUnits, type UnitOptions } from './areas.js';
export { sweepDepressions, nodeSums, type DepressionSweep, type NodeSums } from './sweep.js';
export { buildHierarchy, type Hierarchy, type HierarchyFilters, type RemovedSummary } from './hierarchy.js';
export { pondRasters, topLabels, type PondRasters, type SpareMemory } from './rasters.js';
export {
  depressionOutlines, traceDepressionOutlines, traceOutlines, writeOutlineGeometry, outlineRings, depressionRegions, ringArea, OUTLINE_LEVELS,
  type DepressionOutline, type Outline, type OutlineLevels, type RegionSpec, type FlatPolygon, type FlatRing,
} from './vectors.js';
export { stageVolume, type StageRow } from './stage.js';
export { toWgs84, projDefinition } from './reproject.js';
export { runoff, runoffStageVolume, type RunoffOptions, type RunoffResult, type RunoffWater, type RunoffInputInfo, type WaterBodies } from './runoff.js';
export { fillSpillMerge, routingTree, flowDestinations, layerLevels, stepWeights, type RoutingTree, type RoutingResult } from './runoff-route.js';
export { parseDepth, depthUnit, alignRaster, checkDepthRaster, DEPTH_UNITS, type AlignedRaster } from './runoff-input.js';
export { bodyOutlines, traceBodyOutlines } from './runoff-vectors.js';
