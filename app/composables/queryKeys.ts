/** One place for the query cache's keys, so invalidations cannot drift from the queries. */
export const queryKeys = {
  projects: () => ['projects'] as const,
  project: (projectId: string) => ['projects', projectId] as const,
  members: (projectId: string) => ['projects', projectId, 'members'] as const,
  devMail: () => ['dev-mail'] as const,
}
