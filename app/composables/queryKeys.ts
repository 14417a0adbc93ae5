/** One place for the query cache's keys, so invalidations cannot drift from the queries. */
export const queryKeys = {
  projects: () => ['projects'] as const,
  project: (projectId: string) => ['projects', projectId] as const,
  members: (projectId: string) => ['projects', projectId, 'members'] as const,
  scans: (projectId: string) => ['projects', projectId, 'scans'] as const,
  /** One scan followed on its own while it processes. */
  scan: (scanId: string) => ['scans', scanId] as const,
  scenes: (projectId: string) => ['projects', projectId, 'scenes'] as const,
  /** One scene with its placements. */
  scene: (sceneId: string) => ['scenes', sceneId] as const,
  /** A scene's markers with their checks. */
  markers: (sceneId: string) => ['scenes', sceneId, 'markers'] as const,
  /** One marker's settled edits. */
  markerHistory: (markerId: string) => ['markers', markerId, 'history'] as const,
  /** One marker's comment threads. */
  markerComments: (markerId: string) => ['markers', markerId, 'comments'] as const,
  /** The scene's markers as they were at a time. */
  sceneState: (sceneId: string, at: string) => ['scenes', sceneId, 'state', at] as const,
  /** The scene's registration report (placements and their registrations). */
  registrations: (sceneId: string) => ['scenes', sceneId, 'registrations'] as const,
  /** The scene's objects with their members' trims. */
  objects: (sceneId: string) => ['scenes', sceneId, 'objects'] as const,
  /** Every placement's scene cuts (one list per placement). */
  sceneCuts: (sceneId: string) => ['scenes', sceneId, 'scene-cuts'] as const,
  /** What an object keeps at a revision (counts and a thinned sample). */
  objectPoints: (objectId: string, revision: number) => ['objects', objectId, 'points', revision] as const,
  exports: (sceneId: string) => ['scenes', sceneId, 'exports'] as const,
  /** One registration (a draft polled while it refines). */
  registration: (registrationId: string) => ['registrations', registrationId] as const,
  checkpoints: (sceneId: string) => ['scenes', sceneId, 'checkpoints'] as const,
  checkpoint: (checkpointId: string) => ['checkpoints', checkpointId] as const,
  uploadTokens: (projectId: string) => ['projects', projectId, 'upload-tokens'] as const,
  invites: (projectId: string) => ['projects', projectId, 'invites'] as const,
  passes: (projectId: string) => ['projects', projectId, 'passes'] as const,
  /** The invitation the page's link points at (one per tab; the token itself stays out of the key). */
  inviteLookup: () => ['invite-lookup'] as const,
  devMail: () => ['dev-mail'] as const,
}
