/**
 * The few runtime globals the pure core may use. The core's tsconfig has no DOM and no Node types, so anything
 * else (document, Buffer, process, fs) is a compile error there; these exist in Node, browsers and workers alike.
 */
declare const performance: { now(): number };
