/**
 * Version of the tracer's numerical output. Bump it whenever the same scene, seed and pass range can give
 * different accumulated integers (new sampling, new quantisation, changed material model...), because
 * renders and their accumulation hashes are stored with this string.
 */
export const TRACER_VERSION = "tracewell-tracer/1.0.0";
