package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class CsrAssemblerTest {

  /** An input that yields different edges on its second pass is caught, never built wrongly. */
  @Test
  void inputChangedBetweenPassesIsDetected() {
    EdgeSource changing =
        new EdgeSource() {
          private int pass;

          @Override
          public void forEachEdge(Visitor visitor) {
            pass++;
            visitor.edge(0, 0, 1);
            visitor.edge(1, pass == 1 ? 2 : 0, 1);
          }

          @Override
          public int nodeCount() {
            return 3;
          }

          @Override
          public String describePosition(long position) {
            return "test input";
          }

          @Override
          public String describeNode(int index) {
            return Integer.toString(index);
          }
        };
    IllegalStateException ex =
        assertThrows(
            IllegalStateException.class,
            () ->
                CsrAssembler.assemble(
                    changing, 3, SelfLoopPolicy.ADD, DirectionPolicy.KEEP, DuplicatePolicy.MERGE));
    assertTrue(ex.getMessage().contains("changed between the two passes"), ex.getMessage());
  }
}
