/** JMH benchmarks of the attention kernels: the dense (ND4J) path and the sparse (CSR) path. */
package dev.heed.bench.kernel;
