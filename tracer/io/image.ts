/** Linear RGB radiance, three float32 per pixel, row 0 = the TOP row of the picture (as on screen). */
export type FloatImage = { width: number; height: number; data: Float32Array };

export function createFloatImage(width: number, height: number): FloatImage {
  return { width, height, data: new Float32Array(width * height * 3) };
}

/** Error from a binary image reader; `offset` is the byte where the problem was found. */
export class ImageFormatError extends Error {
  readonly offset: number;
  constructor(format: string, offset: number, message: string) {
    super(`${format}: byte ${offset}: ${message}`);
    this.name = "ImageFormatError";
    this.offset = offset;
  }
}
