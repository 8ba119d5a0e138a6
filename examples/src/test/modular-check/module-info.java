/**
 * A small application as a named module, for {@code ModulePathIT}: it requires only {@code
 * dev.heed.core}; the kernels come in through service binding.
 */
module dev.heed.check {
  requires dev.heed.core;
}
