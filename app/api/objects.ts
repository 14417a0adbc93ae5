import {
  ObjectHistory,
  ObjectList,
  ObjectPoints,
  ObjectResponse,
  TrimList,
  TrimResponse,
  type ObjectCreateBody,
  type ObjectTrimCreateBody,
  type ObjectUpdateBody,
  type SceneCutCreateBody,
  type SceneObject,
  type Trim,
  type TrimUpdateBody,
} from '@shared/schemas'
import { apiPath, http } from './http'

/** Objects of a scene and their trims, and placements' scene cuts; trims go in and come out in the scene frame. */
export async function listObjects(sceneId: string, signal?: AbortSignal): Promise<SceneObject[]> {
  return (await http.get(apiPath`/api/scenes/${sceneId}/objects`, ObjectList, { signal })).objects
}

export async function createObject(sceneId: string, body: ObjectCreateBody): Promise<SceneObject> {
  return (await http.post(apiPath`/api/scenes/${sceneId}/objects`, body, ObjectResponse)).object
}

export async function updateObject(objectId: string, body: ObjectUpdateBody): Promise<SceneObject> {
  return (await http.patch(apiPath`/api/objects/${objectId}`, body, ObjectResponse)).object
}

export function deleteObject(objectId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/objects/${objectId}`)
}

/** What the object's trims and stray filter keep, per member, and a thinned sample of the kept points. */
export async function objectPoints(objectId: string, signal?: AbortSignal): Promise<ObjectPoints> {
  return http.get(apiPath`/api/objects/${objectId}/points`, ObjectPoints, { signal })
}

/** The object's versions and its trims', newest first. */
export async function objectHistory(objectId: string, signal?: AbortSignal) {
  return (await http.get(apiPath`/api/objects/${objectId}/history`, ObjectHistory, { signal })).revisions
}

/** A trim of one member of the object. */
export async function createObjectTrim(objectId: string, body: ObjectTrimCreateBody): Promise<Trim> {
  return (await http.post(apiPath`/api/objects/${objectId}/trims`, body, TrimResponse)).trim
}

/** A placement's scene cuts (everything that reads the placement honours them). */
export async function listSceneCuts(instanceId: string, signal?: AbortSignal): Promise<Trim[]> {
  return (await http.get(apiPath`/api/instances/${instanceId}/trims`, TrimList, { signal })).trims
}

export async function createSceneCut(instanceId: string, body: SceneCutCreateBody): Promise<Trim> {
  return (await http.post(apiPath`/api/instances/${instanceId}/trims`, body, TrimResponse)).trim
}

export async function updateTrim(trimId: string, body: TrimUpdateBody): Promise<Trim> {
  return (await http.patch(apiPath`/api/trims/${trimId}`, body, TrimResponse)).trim
}

export function deleteTrim(trimId: string): Promise<void> {
  return http.deleteNoContent(apiPath`/api/trims/${trimId}`)
}
