/** Types of scripts/prerequisites.mjs (plain JavaScript so it runs before the build). */
export declare const paths: { chromium(): string; python(): string; gdalinfo(): string };
export interface Group {
  id: 'browser' | 'gdal' | 'skimage' | 'numpy' | 'gudhi' | 'slurm';
  what: string;
  packages: string[];
  missing(): string | null;
  overridden(): boolean;
}
export declare const GROUPS: Group[];
export declare function installer(): string[] | null;
export declare function skippedByRunner(): string[] | null;
