import type { ZoneStateMessage } from './zoneState.ts';
import { siteStatusTopic, stateTopic, topicSegment } from './topics.ts';

/**
 * Home Assistant MQTT discovery (https://www.home-assistant.io/integrations/mqtt/#mqtt-discovery,
 * an open convention also read by other home and building automation systems): one retained
 * config message per zone on `<discoveryPrefix>/sensor/residuum_<site>/<camera>_<zone>/config`
 * (`<discovery_prefix>/<component>/[<node_id>/]<object_id>/config`), describing a sensor that reads
 * the zone's retained state topic. So zones appear as sensors without hand configuration:
 *
 * - rooms: the count of people (`unit_of_measurement` people, `state_class` measurement);
 * - shelves: the fill in percent;
 * - the rest of the state message (state, capacity, zoneName) as the sensor's attributes;
 * - available while the site's status says `online` (the status topic, whose will is `offline`);
 * - one device per camera and site.
 *
 * An empty retained message on the config topic removes the sensor (done when a zone goes away).
 */
export interface DiscoveryConfig {
  readonly topic: string;
  readonly payload: Record<string, unknown>;
}

/** The discovery message of one zone. Example: `discoveryConfig('homeassistant', 'residuum', 'riverside', state)`. */
export function discoveryConfig(discoveryPrefix: string, prefix: string, site: string, state: ZoneStateMessage): DiscoveryConfig {
  const s = topicSegment(site);
  const objectId = `${topicSegment(state.camera)}_${topicSegment(state.zone)}`;
  const room = state.kind === 'room';
  return {
    topic: `${discoveryPrefix}/sensor/residuum_${s}/${objectId}/config`,
    payload: {
      name: state.zoneName,
      unique_id: `residuum_${s}_${objectId}`,
      state_topic: stateTopic(prefix, site, state.camera, state.zone),
      value_template: room ? '{{ value_json.count }}' : '{{ (value_json.fill * 100) | round(1) if value_json.fill is not none else none }}',
      unit_of_measurement: room ? 'people' : '%',
      state_class: 'measurement',
      icon: room ? 'mdi:account-group' : 'mdi:archive',
      json_attributes_topic: stateTopic(prefix, site, state.camera, state.zone),
      availability_topic: siteStatusTopic(prefix, site),
      availability_template: '{{ value_json.state }}',
      payload_available: 'online',
      payload_not_available: 'offline',
      device: {
        identifiers: [`residuum_${s}_${topicSegment(state.camera)}`],
        name: `${state.cameraName} (${site})`,
        manufacturer: 'Residuum',
        model: 'camera occupancy counter',
      },
    },
  };
}
