/** Spatial statistics over districts: neighbour lists, Getis–Ord Gi*, global Moran's I, hot/cold spot classes. */
export { neighbours, knnNeighbours, centroidLonLat, greatCircleMetres, type WeightsKind, type WeightsOptions } from './weights.js';
export { giStar, type GiStarResult } from './getisOrd.js';
export { moranI, type MoranResult } from './moran.js';
export { classifySpot, type Spot, type SpotClass } from './classify.js';
