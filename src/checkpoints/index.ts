export type { CheckpointStore } from './store.js';
export { FolderCheckpointStore } from './folder-store.js';
export { MemoryCheckpointStore } from './memory-store.js';
export { CHECKPOINT_FORMAT_VERSION, checkpointManifest, checkpointWeights, decodeCheckpoint, encodeCheckpoint } from './format.js';
export type { CheckpointManifest, NamedWeights, VariableEntry } from './format.js';
