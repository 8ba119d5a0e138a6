/**
 * Not API, and not exported: the per-layer steps of a model that incremental scoring in {@code
 * dev.heed.live} runs over a few rows at a time, reached through {@link
 * dev.heed.internal.model.ModelSteps} (installed by {@code dev.heed.model} when its model class
 * loads), so that {@code dev.heed.model} keeps its layer internals package-private.
 */
package dev.heed.internal.model;
