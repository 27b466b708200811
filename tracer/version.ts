/**
 * Version of the tracer's numerical output. Bump it whenever the same scene, seed and pass range can give
 * different accumulated integers (new sampling, new quantisation, changed material model...), because
 * renders and their accumulation hashes are stored with this string.
 *
 * 1.1.0: the scene BVH builder changed; where two primitives are hit at exactly the same distance a
 * different one may win (10 of 14,400 pixels of glass-carafe-sky at 160×90, 4 spp), so hashes of such
 * scenes differ from 1.0.0.
 */
export const TRACER_VERSION = "tracewell-tracer/1.1.0";
