package dev.heed.model;

/**
 * A layer's settings or tensors do not fit together. Thrown by the layer builders as an {@link
 * IllegalArgumentException} whose message names the layer (kind and name) and, where it applies,
 * the tensor (name and role); the model file reader turns it into a {@link ModelFormatException}
 * that also names the file and the layer's index. Internal.
 */
final class InvalidLayerException extends IllegalArgumentException {

  private static final long serialVersionUID = 1L;

  /** The tensor's role, or null when the problem is not about one tensor. */
  final String role;

  /** The tensor's name, or null. */
  final String tensorName;

  /** What is wrong, without the layer and tensor. */
  final String problem;

  InvalidLayerException(String kind, String layer, String role, String tensorName, String problem) {
    super(kind + " layer '" + layer + "'" + tensorPart(role, tensorName) + ": " + problem);
    this.role = role;
    this.tensorName = tensorName;
    this.problem = problem;
  }

  /** ", tensor 'name' (role r)", or nothing when the problem is not about one tensor. */
  static String tensorPart(String role, String tensorName) {
    return tensorName == null ? "" : ", tensor '" + tensorName + "' (role " + role + ")";
  }
}
