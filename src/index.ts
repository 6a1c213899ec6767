/** swatchbook as a library: what the command line uses. Importing this module has no side effects. */
export { loadRecipe, normaliseRecipe } from './recipe/load.ts';
export type { Recipe, SourceSpec } from './recipe/types.ts';
export { recipeSchema } from './recipe/schema.ts';
export { planRecipe, harvestRecipe, runRecipe, verifyRecipe, refetchDrift, hashTree, lockPathFor, defaultCacheDir } from './pipeline.ts';
export type { RunOptions, VerifyReport, DriftReport } from './pipeline.ts';
export { tracePatch, renderTrace } from './dataset/trace.ts';
export type { IndexRecord } from './dataset/records.ts';
export { parseManifest, parseCollection } from './iiif/presentation.ts';
export { parseInfoJson } from './iiif/image-service.ts';
export { imageRequestUrl, encodeIdentifier } from './iiif/image-url.ts';
export { parseAnnotationDocument } from './annotation/web-annotation.ts';
export { planCrop } from './plan/plan-crop.ts';
export type { CropRequest, StitchRecipe, Piece } from './plan/crop-request.ts';
export { planDataset } from './plan/plan-dataset.ts';
export { SwatchbookError, InputError, FetchError, UsageError } from './errors.ts';
export { VERSION } from './version.ts';
