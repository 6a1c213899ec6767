import type { Rect } from '../geometry/rect.ts';
import type { ComplianceLevel, ImageApiVersion } from '../iiif/image-service.ts';

/** One image request whose decoded result is placed into the crop's mosaic. */
export interface Piece {
  url: string;
  /** Another spelling of the same request, tried when `url` answers 404 (static pyramids differ on `full`). */
  fallbackUrl?: string;
  /** Where the piece goes in the mosaic, and the size it is resized to (mosaic pixels). */
  left: number;
  top: number;
  width: number;
  height: number;
  /** The size the server should return. */
  expectWidth: number;
  expectHeight: number;
  /**
   * How far the decoded size may differ (each side, pixels) before it is a mismatch.
   * 0 for exact `w,h` requests; 1 for `w,` requests, whose derived side servers round differently.
   */
  tolerance: number;
}

/**
 * How to turn fetched pieces into the crop: paste every piece into a mosaic,
 * extract a rectangle, and resize it to the output size when they differ.
 */
export interface StitchRecipe {
  mosaicWidth: number;
  mosaicHeight: number;
  pieces: Piece[];
  extract: Rect;
  /** Set when the extracted rectangle must be resampled (local scaling). */
  resize?: { width: number; height: number };
}

/** A crop to fetch: the unit the harvester serves and the patch cutter consumes. */
export interface CropRequest {
  /** Stable key: a hash of service base, output box and scale. */
  key: string;
  service: { id: string; base: string; version: ImageApiVersion; level: ComplianceLevel };
  /** Output pixels per canvas unit. */
  scale: number;
  /** The crop's footprint on the canvas-anchored output grid (output pixels). */
  outputBox: Rect;
  /** The same footprint in canvas units. */
  canvasRegion: Rect;
  /** The same footprint in the full image's pixels (fractional where the scale is not native). */
  imageRegion: Rect;
  format: string;
  quality: string;
  stitch: StitchRecipe;
  /** Human-readable decisions taken (format fallback, local resampling, splitting, level-0 tiles). */
  notes: string[];
}

export function cropUrls(crop: CropRequest): string[] {
  return crop.stitch.pieces.map((p) => p.url);
}
