// The one error type of raster reading, on its own so the TIFF structure walk
// (tiff-structure.ts) and the reader (raster.ts) share it without importing each other.
/** Why a raster cannot be used; the API maps codes to HTTP statuses. */
export type RasterErrorCode =
  | 'not_tiff'
  | 'no_georeferencing'
  | 'unsupported_compression'
  | 'unsupported_crs'
  | 'unsupported_layout'
  | 'corrupt';

export class RasterError extends Error {
  readonly code: RasterErrorCode;
  constructor(code: RasterErrorCode, message: string) {
    super(message);
    this.name = 'RasterError';
    this.code = code;
  }
}
