import { authRoutes } from './auth'
import { checkpointRoutes } from './checkpoints'
import { commentRoutes } from './comments'
import { markerRoutes } from './markers'
import { projectRoutes } from './projects'
import type { RouteDef } from './registry'
import { scanRoutes } from './scans'
import { sceneRoutes } from './scenes'
import { systemRoutes } from './system'

/** Every API route, in one list: the app mounts it and the authorization test walks it. */
export const apiRoutes: RouteDef[] = [...systemRoutes, ...authRoutes, ...projectRoutes, ...scanRoutes, ...sceneRoutes, ...markerRoutes, ...commentRoutes, ...checkpointRoutes]
