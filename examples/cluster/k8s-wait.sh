#!/bin/sh
# Waits until a Job has ended, Complete or Failed, and says which; prints
# the failed indexes of an Indexed Job. 'kubectl wait
# --for=condition=complete' alone would wait for its whole timeout when an
# index has failed for good.
#
#   ./k8s-wait.sh JOB [SECONDS_BETWEEN_CHECKS]
#
# Exit status 0 Complete, 1 Failed, 2 usage or kubectl error.
set -eu
job=${1:?usage: k8s-wait.sh JOB [SECONDS]}
every=${2:-30}
while :; do
	if ! ended=$(kubectl get job "$job" -o 'jsonpath={.status.conditions[?(@.status=="True")].type}'); then
		exit 2
	fi
	case " $ended " in
	*" Complete "*)
		echo "job/$job: Complete"
		exit 0
		;;
	*" Failed "*)
		echo "job/$job: Failed; failed indexes: $(kubectl get job "$job" -o 'jsonpath={.status.failedIndexes}')"
		exit 1
		;;
	esac
	sleep "$every"
done
