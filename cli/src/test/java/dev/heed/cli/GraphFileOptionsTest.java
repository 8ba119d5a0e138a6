package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.demo.DemoGraph;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

/**
 * The graph policy defaults of classify and train are one option group, the demo graph's policy
 * (DemoGraph).
 */
class GraphFileOptionsTest {

  @Test
  void defaultsAndDemoOptionsFollowDemoGraph() {
    ClassifyCommand command = new ClassifyCommand();
    new CommandLine(command).parseArgs();
    TrainCommand train = new TrainCommand();
    new CommandLine(train).parseArgs("--out", "m.heed");
    for (GraphFileOptions o :
        new GraphFileOptions[] {
          command.graphOptions, train.graphOptions, GraphFileOptions.demo()
        }) {
      assertEquals(DemoGraph.DIRECTION, o.directionPolicy());
      assertEquals(DemoGraph.SELF_LOOPS, o.selfLoopPolicy());
      assertEquals(DemoGraph.DUPLICATES, o.duplicatePolicy());
    }
  }
}
