package acquire

import "errors"

var (
	// ErrDriveLimit: a requested drive amplitude is above the rig's limit.
	ErrDriveLimit = errors.New("acquire: drive amplitude above the rig's limit")
	// ErrDisplacementLimit: the response exceeded the rig's displacement limit.
	ErrDisplacementLimit = errors.New("acquire: displacement above the rig's limit")
	// ErrDisconnected: the source lost its device or cable.
	ErrDisconnected = errors.New("acquire: source disconnected")
)
