/** Recording observations (see the files in ./recording/): the Record sheet, saving, corrections and voids, history. */
export { checkpointOpen, context, sampleAtCheckpoint, samplesAtCheckpoint } from './recording/context';
export { attributeView, recordSheet } from './recording/sheet';
export { recordObservations, settleCheckpoint, type Recorder } from './recording/save';
export { correctObservation, observationHistory, voidObservation } from './recording/corrections';
export { columnsFor, valueOf } from './recording/values';
