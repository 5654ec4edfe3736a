// Workbench entry point.
import './components/app';
import { TrainClient } from './controllers/train-client';

// For `npm run bench:ratio`: time the reference training step in a training worker of this page.
(window as unknown as { shapekinBenchStep?: (repeats?: number) => Promise<{ msPerStep: number; backend: string }> }).shapekinBenchStep = async (repeats = 7) => {
  const client = new TrainClient();
  try {
    return await client.benchStep(repeats);
  } finally {
    client.dispose();
  }
};
