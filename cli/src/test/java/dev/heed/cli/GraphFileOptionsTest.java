package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.demo.DemoGraph;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

/** The classify verb's graph policy defaults are the demo graph's policy (DemoGraph). */
class GraphFileOptionsTest {

  @Test
  void defaultsAndDemoOptionsFollowDemoGraph() {
    ClassifyCommand command = new ClassifyCommand();
    new CommandLine(command).parseArgs();
    for (GraphFileOptions o :
        new GraphFileOptions[] {command.graphOptions, GraphFileOptions.demo()}) {
      assertEquals(DemoGraph.DIRECTION, o.directionPolicy());
      assertEquals(DemoGraph.SELF_LOOPS, o.selfLoopPolicy());
      assertEquals(DemoGraph.DUPLICATES, o.duplicatePolicy());
    }
  }
}
