/** JMH benchmarks of whole-model inference. */
package dev.heed.bench.model;
