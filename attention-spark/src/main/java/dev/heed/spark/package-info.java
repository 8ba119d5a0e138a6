/**
 * Heed on Apache Spark: {@link dev.heed.spark.SparkNodeClassifier} classifies the nodes of a graph
 * held as DataFrames, each attention layer as joins, a shuffle by target and Heed's CSR kernel over
 * partition-local row blocks; {@link dev.heed.spark.SparkScoringJob} is its spark-submit entry
 * point.
 */
package dev.heed.spark;
