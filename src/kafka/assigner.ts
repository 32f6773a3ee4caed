import type { Assigner, PartitionAssigner } from 'kafkajs';
import { kafkajsModule } from './kafkajs.js';

/**
 * How `serve` spreads partitions over the instances of a group: partition number p of *every*
 * subscribed topic goes to the same instance — the (p mod n)-th of the n members in member-id order. So
 * with `scope: partition` the labels of events partition p, written to labels partition p, reach the
 * instance that holds the session of events partition p, and that session joins them. (kafkajs's own
 * round-robin assigner deals the partitions of all topics out in one sequence, so events partition p
 * and labels partition p land on different instances whenever the member count does not divide the
 * partition count.) Every member of a group must offer the same assigner; all `serve` instances do.
 *
 * @example
 * kafka.consumer({ groupId, partitionAssigners: [samePartitionAssigner] });
 */
const SAME_PARTITION_ASSIGNER = 'shoal-same-partition';

export const samePartitionAssigner: PartitionAssigner = ({ cluster }) => {
  const assigner: Assigner = {
    name: SAME_PARTITION_ASSIGNER,
    version: 0,
    async assign({ members, topics }) {
      const ids = members.map((m) => m.memberId).sort();
      const plan = new Map<string, Record<string, number[]>>(ids.map((id) => [id, {}]));
      for (const topic of topics) {
        for (const { partitionId } of cluster.findTopicPartitionMetadata(topic)) {
          const member = plan.get(ids[partitionId % ids.length]!)!;
          member[topic] = [...(member[topic] ?? []), partitionId];
        }
      }
      for (const assignment of plan.values()) {
        for (const partitions of Object.values(assignment)) partitions.sort((a, b) => a - b);
      }
      return ids.map((memberId) => ({
        memberId,
        memberAssignment: kafkajsModule().AssignerProtocol.MemberAssignment.encode({
          version: assigner.version,
          assignment: plan.get(memberId)!,
          userData: Buffer.alloc(0),
        }),
      }));
    },
    protocol({ topics }) {
      return {
        name: assigner.name,
        metadata: kafkajsModule().AssignerProtocol.MemberMetadata.encode({
          version: assigner.version,
          topics,
          userData: Buffer.alloc(0),
        }),
      };
    },
  };
  return assigner;
};
