/**
 * The bundled demo scenario: an invented payments network (accounts, transfers, roles) made by a
 * seeded contextual stochastic block model with heavy-tailed degrees, and the files the demo reads.
 * All data here is synthetic.
 */
package dev.heed.demo;
