"""Launch one antiphon node beside an existing arm driver.

    ros2 launch launch/arm.launch.py arm:=left params_file:=config/demo_cell.yaml \
        wrench_topic:=/left/ft_sensor/wrench joint_states_topic:=/left/joint_states

Arguments name the driver's topics; antiphon remaps its inputs onto them. Outputs appear under
/<arm>/antiphon/ (recommended_twist, role, belief, watchdog, correction_wrench, impact_wrench).
SAFETY: the watchdog is not a safety-rated function; see SAFETY.md.
"""
import os
import sys

from launch import LaunchDescription
from launch.actions import DeclareLaunchArgument
from launch.substitutions import LaunchConfiguration

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from antiphon_launch_common import REPO, arm_arguments, arm_process  # noqa: E402


def generate_launch_description():
    arm = os.environ.get('ANTIPHON_ARM', 'left')
    return LaunchDescription([
        DeclareLaunchArgument('arm', default_value=arm, description='left or right'),
        DeclareLaunchArgument('params_file', default_value=os.path.join(REPO, 'config', 'demo_cell.yaml')),
        DeclareLaunchArgument('use_sim_time', default_value='false'),
        *arm_arguments(arm),
        arm_process(LaunchConfiguration('arm'), LaunchConfiguration('params_file')),
    ])
