/**
 * The Vector API ({@code jdk.incubator.vector}) gather loop. This package is compiled in a separate
 * pass with {@code --add-modules jdk.incubator.vector} and reached only by reflection from {@link
 * dev.heed.bench.roofline.GatherProbe}, so the rest of the module loads without that module.
 */
package dev.heed.bench.roofline.vector;
