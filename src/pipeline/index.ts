/**
 * The pipeline's public face: the stages' wiring and what callers (the commands, the
 * scale-out roles, eval) use. Each stage lives in a module of its own in this folder.
 */
export { type ArticleOutcome, type DetectedWork, type Flow, type PipelineContext, outcomeOf } from './context.js';
export { admitStage, admitWork } from './admit.js';
export { reloadLinking } from './link-group.js';
export { linkStages, runPipeline } from './run-pipeline.js';
export { detectWork, embedTogether } from './embed-group.js';
