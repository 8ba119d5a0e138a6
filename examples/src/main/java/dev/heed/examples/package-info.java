/** Small, readable programs that show how to use Heed; copy from them. */
package dev.heed.examples;
