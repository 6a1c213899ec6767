/** The recipe's fixed scale: output pixels per canvas unit, or per millimetre of the physical object. */
export type ScaleSpec = { pixelsPerCanvasUnit: number } | { pixelsPerMm: number };

export type SourceSpec =
  | { kind: 'manifest'; location: string; mmPerCanvasUnit?: number }
  | { kind: 'collection'; location: string; mmPerCanvasUnit?: number }
  | { kind: 'annotations'; location: string }
  | { kind: 'sheet'; location: string };

/** A validated recipe with defaults filled and paths resolved: what every stage takes. */
export interface Recipe {
  name: string;
  description: string;
  seed: string;
  /** Absolute path of the recipe file (or a label for in-memory recipes). */
  file: string;
  sources: SourceSpec[];
  labels: Record<string, string[]>;
  scale: ScaleSpec;
  patch: { size: number; stride: number; minCoverage: number };
  negatives: { ratio: number; margin: number; label: string };
  split: { fractions: { train: number; val: number; test: number }; groupBy: 'manifest' | 'canvas' | 'annotation' };
  dedupe: { maxDistance: number };
  request: { format: 'jpg' | 'png'; quality: 'default' | 'color' };
  network: { contact?: string; concurrency: number; perHost: number; perHostRate: number; timeoutMs: number; retries: number; allowHosts?: string[] };
  rights: { allow?: string[] };
  /** WebDataset-style tar shards beside the folders, when asked for. */
  shards?: { patchesPerShard: number };
  output: string;
}
