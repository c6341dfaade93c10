/** File input and output for the command line and the Electron main process. */
export { openAudio } from './reader.ts';
export { writeAudio, isSameFile, TEMP_PREFIX, type RenderingLike } from './writer.ts';
export type { ChunkRecord, ContainerFormat, FileInfo, OpenedAudio, SampleFormat, WriteOptions, WriteResult } from './types.ts';
