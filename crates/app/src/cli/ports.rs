//! `armwright ports`: the serial ports of this computer, with USB vendor and product ids and a
//! description, to find the one a device is on.

use armwright_link::{PortSummary, list_ports};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{fail, print_json};

pub(crate) fn run(json: bool) -> Outcome {
    let ports = match list_ports() {
        Ok(ports) => ports,
        Err(error) => return fail(json, &error.to_string(), json!({}), Outcome::Refused),
    };
    if json {
        print_json(&ports_json(&ports));
    } else if ports.is_empty() {
        println!("no serial ports found");
    } else {
        println!("{:<24} {:<9} description", "path", "usb id");
        for port in &ports {
            let ids = port.usb.as_ref().map_or_else(
                || "-".to_owned(),
                |usb| format!("{:04x}:{:04x}", usb.vendor_id, usb.product_id),
            );
            println!("{:<24} {:<9} {}", port.path, ids, port.description);
        }
    }
    Outcome::Done
}

/// `{ "ok": true, "ports": [{ "path", "usb_vendor_id", "usb_product_id", "description" }] }`;
/// the ids are numbers, or null for a port that is not on USB.
fn ports_json(ports: &[PortSummary]) -> Value {
    let ports: Vec<Value> = ports
        .iter()
        .map(|port| {
            json!({
                "path": port.path,
                "usb_vendor_id": port.usb.as_ref().map(|usb| usb.vendor_id),
                "usb_product_id": port.usb.as_ref().map(|usb| usb.product_id),
                "description": port.description,
            })
        })
        .collect();
    json!({ "ok": true, "ports": ports })
}

#[cfg(test)]
mod tests {
    use super::*;
    use armwright_link::UsbIds;

    #[test]
    fn usb_ids_are_numbers_and_other_ports_have_null_ids() {
        let ports = [
            PortSummary {
                path: "/dev/ttyACM0".to_owned(),
                usb: Some(UsbIds {
                    vendor_id: 0x1234,
                    product_id: 0x00ab,
                    serial_number: None,
                    manufacturer: None,
                    product: None,
                }),
                description: "USB serial 1234:00ab".to_owned(),
            },
            PortSummary {
                path: "/dev/ttyS0".to_owned(),
                usb: None,
                description: "built-in serial port".to_owned(),
            },
        ];
        let out = ports_json(&ports);
        assert_eq!(out["ports"][0]["usb_vendor_id"], json!(0x1234));
        assert_eq!(out["ports"][0]["usb_product_id"], json!(0xab));
        assert_eq!(out["ports"][1]["usb_vendor_id"], Value::Null);
        assert_eq!(out["ports"][1]["path"], json!("/dev/ttyS0"));
    }
}
